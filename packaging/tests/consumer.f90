!> The Fortran module as a user builds it with CMake (hrtrail::fortran): a
!> small population's summary at full precision.
program consumer_f
  use, intrinsic :: iso_c_binding, only: c_double, c_int64_t
  use hrtrail
  implicit none
  type(hrt_grid_t) :: g
  type(hrt_pop_spec) :: spec
  type(hrt_pop_summary), allocatable :: sums(:)
  call hrtf_open(g)
  spec = hrtf_pop_spec_default()
  spec%zdist = hrtf_zdist_fixed(hrt_grid_z_ref(g%ptr))
  spec%n_stars = 5000
  spec%chunk_size = 1000
  call hrtf_pop_summaries(sums, [1e9_c_double])
  call hrtf_pop_run(g, spec, sums, n_threads=2)
  write (*, '(a,i0,a,es25.17)') 'population: ', sums(1)%n_evaluated, ' evaluated, L/Lsun ', &
       hrtf_pop_sum_value(sums(1)%l_lsun)
  call hrtf_close(g)
end program consumer_f
