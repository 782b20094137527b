!> A star cluster and one of its giants, from Fortran: populations, fits and forecasts.
!>
!>   cluster_census [GRID]      (default: the installed default grid)
!>
!> The invented scenario: a simulation of the young open cluster "Ember Reach"
!> (invented) forms 40 000 stars in a 20 Myr episode of star formation, with a
!> spread of 0.1 dex in [Fe/H] about the grid's Z_ref.  The program counts its
!> stars by phase and remnant at 100 Myr, 600 Myr and 2 Gyr, its luminosity and
!> main-sequence turnoff, splitting the work in two halves whose summaries
!> merge exactly (as two MPI ranks would).  Then an invented observation of a
!> red giant of the cluster (Teff 4750 +- 90 K, log L 2.1 +- 0.08, [Fe/H]
!> 0.0 +- 0.1) is fitted, and its future forecast from 400 posterior draws.
!> Build against an installed hrtrail:
!>   gfortran cluster_census.f90 $(pkg-config --cflags --libs hrtrail-fortran)
program cluster_census
  use, intrinsic :: iso_c_binding, only: c_double, c_int64_t, c_size_t
  use hrtrail
  implicit none
  real(c_double), parameter :: epochs(3) = [1e8_c_double, 6e8_c_double, 2e9_c_double]
  type(hrt_grid_t) :: grid
  type(hrt_pop_spec) :: spec
  type(hrt_pop_hr) :: hr
  type(hrt_pop_summary), allocatable :: rank0(:), rank1(:)
  type(hrt_fit_model_t) :: model
  type(hrt_fit_model_options) :: opt
  type(hrt_fit_obs) :: obs
  type(hrt_fit_result) :: fit
  type(hrt_fit_sample), allocatable :: draws(:)
  type(hrt_forecast_result) :: future
  type(hrt_forecast_state), allocatable :: later(:)
  character(len=4096) :: path
  character(len=256) :: msg
  real(c_double) :: zref, zlo, zhi
  integer(c_int64_t) :: half
  integer :: stat, i, p, code

  if (command_argument_count() >= 1) then
     call get_command_argument(1, path)
     call hrtf_open(grid, trim(path), stat=stat, errmsg=msg)
  else
     call hrtf_open(grid, stat=stat, errmsg=msg)
  end if
  if (stat /= HRT_OK) then
     write (*, '(a)') 'cannot open the grid: ' // trim(msg)
     stop 1
  end if
  zref = hrt_grid_z_ref(grid%ptr)

  ! ---- the cluster: Kroupa (2001) IMF, 20 Myr of constant star formation, log-normal [Fe/H]
  spec = hrtf_pop_spec_default()
  call hrtf_imf_init(spec%imf, HRT_IMF_KROUPA_2001, 0.1_c_double, 80.0_c_double)
  spec%sfh = hrtf_sfh_span(0.0_c_double, 2e7_c_double)
  spec%zdist = hrtf_zdist_spread(zref / 2, zref * 2, zref, 0.1_c_double)
  spec%n_stars = 40000
  spec%seed = 4242
  spec%chunk_size = 5000
  hr = hrt_pop_hr(3.4_c_double, 4.8_c_double, -3.0_c_double, 6.0_c_double, 28_c_int64_t, 36_c_int64_t)
  call hrtf_pop_summaries(rank0, epochs, hr)
  call hrtf_pop_summaries(rank1, epochs, hr)
  half = hrt_pop_n_chunks(spec) / 2
  call hrtf_pop_run(grid, spec, rank0, 0_c_int64_t, half)
  call hrtf_pop_run(grid, spec, rank1, half, hrt_pop_n_chunks(spec) - half)
  write (*, '(a,i0,a)') 'Ember Reach (invented cluster): ', spec%n_stars, ' stars, ' // &
       hrtf_imf_name(int(spec%imf%kind)) // ' IMF, 20 Myr of star formation'
  do i = 1, size(epochs)
     call hrtf_pop_summary_merge(rank0(i), rank1(i))
     write (*, '(/,a,es9.2,a,i0,a,es10.3,a,es10.3,a)') 'at ', epochs(i), ' yr: ', rank0(i)%n_evaluated, &
          ' stars evaluated, L = ', hrtf_pop_sum_value(rank0(i)%l_lsun), ' Lsun, M = ', &
          hrtf_pop_sum_value(rank0(i)%mass_msun), ' Msun'
     write (*, '(a,f8.3,a)') '  main-sequence turnoff near ', hrt_pop_turnoff_mass(rank0(i)), ' Msun'
     do p = 0, HRT_PHASE_N - 1
        code = hrt_phase_code(int(p, c_size_t))
        if (rank0(i)%n_phase(code + 1) > 0) write (*, '(4x,a44,i7)') hrtf_phase_name(code), &
             rank0(i)%n_phase(code + 1)
     end do
     write (*, '(4x,a44,i7)') 'outside the grid (failed)', rank0(i)%n_drawn - rank0(i)%n_unborn - &
          rank0(i)%n_evaluated
  end do

  ! ---- one of its giants: the posterior, and its future
  opt = hrtf_fit_model_options()
  stat = hrt_grid_z_range(grid%ptr, zlo, zhi)
  opt%feh_min = max(log10(zlo / zref), -0.4_c_double)
  opt%feh_max = min(log10(zhi / zref), 0.4_c_double)
  call hrtf_fit_model_new(model, grid, opt)
  obs = hrtf_fit_obs()
  obs%teff_k = 4750
  obs%teff_k_sigma = 90
  obs%log_l_lsun = 2.1_c_double
  obs%log_l_lsun_sigma = 0.08_c_double
  obs%feh = 0
  obs%feh_sigma = 0.1_c_double
  call hrtf_fit_star(model, obs, fit, seed=7_c_int64_t, n_samples=400, samples=draws, stat=stat, errmsg=msg)
  if (stat /= HRT_OK) then
     write (*, '(a)') 'fit: ' // trim(msg)
     stop 1
  end if
  write (*, '(/,a)') 'giant ER-1 (invented: Teff 4750 +- 90 K, log L 2.1 +- 0.08)'
  write (*, '(a,f6.2,a,f6.2,a,f6.2,a)') '  initial mass ', fit%initial_mass_msun%median, ' Msun (', &
       fit%initial_mass_msun%lo, ' ..', fit%initial_mass_msun%hi, ')'
  write (*, '(a,es10.3,a,es10.3,a,es10.3,a)') '  age ', fit%age_yr%median, ' yr (', fit%age_yr%lo, ' ..', &
       fit%age_yr%hi, ')'
  write (*, '(a,a,a,f5.1,a)') '  phase ', hrtf_phase_name(int(fit%phase)), ' (', &
       100 * fit%phase_prob(fit%phase + 1), ' %)'
  call hrtf_forecast(grid, draws, future, [1e7_c_double, 1e8_c_double], later)
  write (*, '(a,a,a,f5.1,a,f6.3,a)') '  will leave a ', hrtf_remnant_name(int(future%remnant)), ' (', &
       100 * future%remnant_prob(future%remnant + 1), ' %) of ', future%remnant_mass_msun%median, ' Msun'
  do i = 1, size(later)
     write (*, '(a,es9.2,a,a)') '  in ', later(i)%dt_yr, ' yr: most likely ', hrtf_phase_name(int(later(i)%phase))
  end do
  call hrtf_fit_model_free(model)
  call hrtf_close(grid)
  deallocate (rank0, rank1, draws, later)

end program cluster_census
