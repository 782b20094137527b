!> Tests of the Fortran module hrtrail beyond single stars: populations, fits, posterior draws,
!> forecasts, isochrone options, the default routes, the grid's layout and keypoints.
!>
!>   test_services GRID
!>
!> The reference is the C library called straight from C (c_services.c, linked into this
!> program) on the same inputs: every summary, IMF, draw, fit result, posterior sample,
!> forecast and isochrone must be equal byte for byte, and the layout of every derived type
!> equal to the C compiler's offsetof()/sizeof().  Inputs are chosen from what the grid
!> reports (its metallicities, Z_ref, phases), never from values of the default grid written here.
program test_services
  use, intrinsic :: iso_c_binding
  use, intrinsic :: ieee_arithmetic, only: ieee_is_nan
  use hrtrail
  implicit none

  interface
     function svc_n_fields() bind(C) result(n)
       import :: c_int
       integer(c_int) :: n
     end function svc_n_fields
     function svc_field(name, offset, size) bind(C) result(rc)
       import :: c_char, c_size_t, c_int
       character(kind=c_char), intent(in) :: name(*)
       integer(c_size_t), intent(out) :: offset, size
       integer(c_int) :: rc
     end function svc_field
     function svc_n_constants() bind(C) result(n)
       import :: c_int
       integer(c_int) :: n
     end function svc_n_constants
     function svc_constant(name, value) bind(C) result(rc)
       import :: c_char, c_double, c_int
       character(kind=c_char), intent(in) :: name(*)
       real(c_double), intent(out) :: value
       integer(c_int) :: rc
     end function svc_constant
     function svc_n_types() bind(C) result(n)
       import :: c_int
       integer(c_int) :: n
     end function svc_n_types
     function svc_type(name, size) bind(C) result(rc)
       import :: c_char, c_size_t, c_int
       character(kind=c_char), intent(in) :: name(*)
       integer(c_size_t), intent(out) :: size
       integer(c_int) :: rc
     end function svc_type
     function svc_imf_init(imf, kind, lo, hi, alpha) bind(C) result(rc)
       import :: c_int, c_double, hrt_imf
       type(hrt_imf), intent(inout) :: imf
       integer(c_int), value :: kind
       real(c_double), value :: lo, hi, alpha
       integer(c_int) :: rc
     end function svc_imf_init
     function svc_pop_draw(spec, chunk, cap, m, z, t, n) bind(C) result(rc)
       import :: c_int, c_int64_t, c_size_t, c_double, hrt_pop_spec
       type(hrt_pop_spec), intent(in) :: spec
       integer(c_int64_t), value :: chunk
       integer(c_size_t), value :: cap
       real(c_double), intent(inout) :: m(*), z(*), t(*)
       integer(c_size_t), intent(out) :: n
       integer(c_int) :: rc
     end function svc_pop_draw
     function svc_pop_run(path, spec, n_ages, ages, hr, sums, msg) bind(C) result(rc)
       import :: c_char, c_size_t, c_double, c_int, hrt_pop_spec, hrt_pop_hr, hrt_pop_summary
       character(kind=c_char), intent(in) :: path(*)
       type(hrt_pop_spec), intent(in) :: spec
       integer(c_size_t), value :: n_ages
       real(c_double), intent(in) :: ages(*)
       type(hrt_pop_hr), intent(in) :: hr
       type(hrt_pop_summary), intent(inout) :: sums(*)
       character(kind=c_char) :: msg(256)
       integer(c_int) :: rc
     end function svc_pop_run
     function svc_pop_add(path, age, n, m, z, a, hr, sum) bind(C) result(rc)
       import :: c_char, c_size_t, c_double, c_int, hrt_pop_hr, hrt_pop_summary
       character(kind=c_char), intent(in) :: path(*)
       real(c_double), value :: age
       integer(c_size_t), value :: n
       real(c_double), intent(in) :: m(*), z(*), a(*)
       type(hrt_pop_hr), intent(in) :: hr
       type(hrt_pop_summary), intent(inout) :: sum
       integer(c_int) :: rc
     end function svc_pop_add
     function svc_isochrone_with(path, age, z, o, cap, out, n) bind(C) result(rc)
       import :: c_char, c_size_t, c_double, c_int, hrt_isochrone_options, hrt_state
       character(kind=c_char), intent(in) :: path(*)
       real(c_double), value :: age, z
       type(hrt_isochrone_options), intent(in) :: o
       integer(c_size_t), value :: cap
       type(hrt_state), intent(inout) :: out(*)
       integer(c_size_t), intent(out) :: n
       integer(c_int) :: rc
     end function svc_isochrone_with
     function svc_fit(path, o, obs, seed, n_samples, samples, res, msg) bind(C) result(rc)
       import :: c_char, c_size_t, c_int64_t, c_int, hrt_fit_model_options, hrt_fit_obs, hrt_fit_sample, &
            hrt_fit_result
       character(kind=c_char), intent(in) :: path(*)
       type(hrt_fit_model_options), intent(in) :: o
       type(hrt_fit_obs), intent(in) :: obs
       integer(c_int64_t), value :: seed
       integer(c_size_t), value :: n_samples
       type(hrt_fit_sample), intent(inout) :: samples(*)
       type(hrt_fit_result), intent(inout) :: res
       character(kind=c_char) :: msg(256)
       integer(c_int) :: rc
     end function svc_fit
     function svc_forecast(path, n, samples, n_times, dt, states, res, msg) bind(C) result(rc)
       import :: c_char, c_size_t, c_double, c_int, hrt_fit_sample, hrt_forecast_state, hrt_forecast_result
       character(kind=c_char), intent(in) :: path(*)
       integer(c_size_t), value :: n, n_times
       type(hrt_fit_sample), intent(in) :: samples(*)
       real(c_double), intent(in) :: dt(*)
       type(hrt_forecast_state), intent(inout) :: states(*)
       type(hrt_forecast_result), intent(inout) :: res
       character(kind=c_char) :: msg(256)
       integer(c_int) :: rc
     end function svc_forecast
     function svc_import(n, paths, width, map, out, reports, msg) bind(C) result(rc)
       import :: c_size_t, c_char, c_int, hrt_import_track_report
       integer(c_size_t), value :: n, width
       character(kind=c_char), intent(in) :: paths(*), map(*), out(*)
       type(hrt_import_track_report), intent(inout) :: reports(*)
       character(kind=c_char) :: msg(256)
       integer(c_int) :: rc
     end function svc_import
     function svc_default_route(r, name, n_keypoints, names, segments) bind(C) result(rc)
       import :: c_size_t, c_char, c_int
       integer(c_size_t), value :: r
       character(kind=c_char) :: name(64), names(32, 32)
       integer(c_size_t), intent(out) :: n_keypoints
       integer(c_int), intent(inout) :: segments(32)
       integer(c_int) :: rc
     end function svc_default_route
  end interface

  integer :: failures = 0, checks = 0, fields_checked = 0, types_checked = 0, constants_checked = 0
  character(len=4096) :: grid_path
  integer(c_int8_t), parameter :: byte = 0

  if (command_argument_count() < 1) then
     write (*, '(a)') 'usage: test_services GRID'
     error stop 2
  end if
  call get_command_argument(1, grid_path)
  call test_layout()
  call test_constants()
  call test_names()
  call test_routes_and_keypoints()
  call test_isochrone_options()
  call test_population()
  call test_fit_and_forecast()
  call test_import()
  call test_accuracy()
  write (*, '(a,i0,a,i0,a)') 'fortran services: ', checks, ' checks, ', failures, ' failures'
  if (failures > 0) error stop 1

contains

  subroutine expect(ok, what)
    logical, intent(in) :: ok
    character(len=*), intent(in) :: what
    checks = checks + 1
    if (.not. ok) then
       failures = failures + 1
       write (*, '(a,a)') 'FAIL: ', what
    end if
  end subroutine expect

  function cstr(s) result(c)
    character(len=*), intent(in) :: s
    character(kind=c_char, len=:), allocatable :: c
    c = trim(s) // c_null_char
  end function cstr

  function c_text(chars) result(s)
    character(kind=c_char), intent(in) :: chars(:)
    character(len=:), allocatable :: s
    integer :: i
    s = ''
    do i = 1, size(chars)
       if (chars(i) == c_null_char) exit
       s = s // chars(i)
    end do
  end function c_text

  !> Byte-for-byte equality of two byte images (from transfer()), with the first differing byte.
  subroutine expect_bytes(f, c, what)
    integer(c_int8_t), intent(in) :: f(:), c(:)
    character(len=*), intent(in) :: what
    integer :: i
    character(len=80) :: where
    where = ''
    if (size(f) /= size(c)) then
       write (where, '(a,i0,a,i0)') ' (sizes ', size(f), ' and ', size(c)
       where = trim(where) // ')'
    else
       do i = 1, size(f)
          if (f(i) /= c(i)) then
             write (where, '(a,i0,a,i0,a)') ' (first difference at byte ', i - 1, ' of ', size(f), ')'
             exit
          end if
       end do
    end if
    call expect(len_trim(where) == 0, what // trim(where))
  end subroutine expect_bytes

  !> Bit-for-bit equality of two doubles.
  logical function same(x, y)
    real(c_double), intent(in) :: x, y
    same = transfer(x, 0_c_int64_t) == transfer(y, 0_c_int64_t)
  end function same

  integer(c_intptr_t) function addr(p)
    type(c_ptr), intent(in) :: p
    addr = transfer(p, 0_c_intptr_t)
  end function addr

  !> One field: its offset from the start of its variable and its size, against the C compiler's.
  subroutine field(name, base, p, size)
    character(len=*), intent(in) :: name
    type(c_ptr), intent(in) :: base, p
    integer(c_size_t), intent(in) :: size
    integer(c_size_t) :: coff, csize
    fields_checked = fields_checked + 1
    if (svc_field(cstr(name), coff, csize) /= 0) then
       call expect(.false., 'field ' // name // ' is in the C table')
       return
    end if
    call expect(addr(p) - addr(base) == int(coff, c_intptr_t) .and. size == csize, 'offset and size of ' // name)
  end subroutine field

  subroutine type_size(name, size)
    character(len=*), intent(in) :: name
    integer(c_size_t), intent(in) :: size
    integer(c_size_t) :: csize
    types_checked = types_checked + 1
    call expect(svc_type(cstr(name), csize) == 0, 'type ' // name // ' is in the C table')
    call expect(size == csize, 'sizeof(' // name // ')')
  end subroutine type_size

  subroutine test_layout()
    type(hrt_isochrone_options), target :: io
    type(hrt_route_spec), target :: rs
    type(hrt_imf), target :: im
    type(hrt_sfh), target :: sf
    type(hrt_zdist), target :: zd
    type(hrt_pop_spec), target :: ps
    type(hrt_pop_sum), target :: su
    type(hrt_pop_hr), target :: hr
    type(hrt_pop_summary), allocatable, target :: sm
    type(hrt_fit_model_options), target :: mo
    type(hrt_fit_obs), target :: ob
    type(hrt_fit_interval), target :: iv
    type(hrt_fit_sample), target :: sa
    type(hrt_fit_result), target :: fr
    type(hrt_forecast_state), target :: fs
    type(hrt_forecast_event), target :: fe
    type(hrt_forecast_phase), target :: fp
    type(hrt_forecast_result), target :: fo
    type(hrt_ms_options), target :: mso
    type(hrt_ms_value), target :: msv
    type(hrt_ms_estimate), target :: mse
    type(hrt_ms_distance_result), target :: msd
    allocate (sm)
    call type_size('hrt_isochrone_options', c_sizeof(io))
    call field('hrt_isochrone_options.phases', c_loc(io), c_loc(io%phases), c_sizeof(io%phases))
    call field('hrt_isochrone_options.max_dlog_l', c_loc(io), c_loc(io%max_dlog_l), c_sizeof(io%max_dlog_l))
    call field('hrt_isochrone_options.reserved', c_loc(io), c_loc(io%reserved), c_sizeof(io%reserved))
    call type_size('hrt_route_spec', c_sizeof(rs))
    call field('hrt_route_spec.name', c_loc(rs), c_loc(rs%name), c_sizeof(rs%name))
    call field('hrt_route_spec.n_keypoints', c_loc(rs), c_loc(rs%n_keypoints), c_sizeof(rs%n_keypoints))
    call field('hrt_route_spec.keypoint_names', c_loc(rs), c_loc(rs%keypoint_names), c_sizeof(rs%keypoint_names))
    call field('hrt_route_spec.segment_samples', c_loc(rs), c_loc(rs%segment_samples), c_sizeof(rs%segment_samples))
    call type_size('hrt_imf', c_sizeof(im))
    call field('hrt_imf.kind', c_loc(im), c_loc(im%kind), c_sizeof(im%kind))
    call field('hrt_imf.n_seg', c_loc(im), c_loc(im%n_seg), c_sizeof(im%n_seg))
    call field('hrt_imf.m_lo_msun', c_loc(im), c_loc(im%m_lo_msun), c_sizeof(im%m_lo_msun))
    call field('hrt_imf.m_hi_msun', c_loc(im), c_loc(im%m_hi_msun), c_sizeof(im%m_hi_msun))
    call field('hrt_imf.alpha', c_loc(im), c_loc(im%alpha), c_sizeof(im%alpha))
    call field('hrt_imf.seg_lognormal', c_loc(im), c_loc(im%seg_lognormal), c_sizeof(im%seg_lognormal))
    call field('hrt_imf.seg_lo', c_loc(im), c_loc(im%seg_lo), c_sizeof(im%seg_lo))
    call field('hrt_imf.seg_hi', c_loc(im), c_loc(im%seg_hi), c_sizeof(im%seg_hi))
    call field('hrt_imf.seg_a', c_loc(im), c_loc(im%seg_a), c_sizeof(im%seg_a))
    call field('hrt_imf.seg_s', c_loc(im), c_loc(im%seg_s), c_sizeof(im%seg_s))
    call field('hrt_imf.seg_amp', c_loc(im), c_loc(im%seg_amp), c_sizeof(im%seg_amp))
    call field('hrt_imf.seg_c0', c_loc(im), c_loc(im%seg_c0), c_sizeof(im%seg_c0))
    call field('hrt_imf.seg_c1', c_loc(im), c_loc(im%seg_c1), c_sizeof(im%seg_c1))
    call field('hrt_imf.seg_cum', c_loc(im), c_loc(im%seg_cum), c_sizeof(im%seg_cum))
    call field('hrt_imf.norm', c_loc(im), c_loc(im%norm), c_sizeof(im%norm))
    call type_size('hrt_sfh', c_sizeof(sf))
    call field('hrt_sfh.kind', c_loc(sf), c_loc(sf%kind), c_sizeof(sf%kind))
    call field('hrt_sfh.reserved_', c_loc(sf), c_loc(sf%reserved_), c_sizeof(sf%reserved_))
    call field('hrt_sfh.t_start_yr', c_loc(sf), c_loc(sf%t_start_yr), c_sizeof(sf%t_start_yr))
    call field('hrt_sfh.t_end_yr', c_loc(sf), c_loc(sf%t_end_yr), c_sizeof(sf%t_end_yr))
    call field('hrt_sfh.tau_yr', c_loc(sf), c_loc(sf%tau_yr), c_sizeof(sf%tau_yr))
    call field('hrt_sfh.n_table', c_loc(sf), c_loc(sf%n_table), c_sizeof(sf%n_table))
    call field('hrt_sfh.table_t_yr', c_loc(sf), c_loc(sf%table_t_yr), c_sizeof(sf%table_t_yr))
    call field('hrt_sfh.table_rate', c_loc(sf), c_loc(sf%table_rate), c_sizeof(sf%table_rate))
    call type_size('hrt_zdist', c_sizeof(zd))
    call field('hrt_zdist.kind', c_loc(zd), c_loc(zd%kind), c_sizeof(zd%kind))
    call field('hrt_zdist.reserved_', c_loc(zd), c_loc(zd%reserved_), c_sizeof(zd%reserved_))
    call field('hrt_zdist.z', c_loc(zd), c_loc(zd%z), c_sizeof(zd%z))
    call field('hrt_zdist.z_lo', c_loc(zd), c_loc(zd%z_lo), c_sizeof(zd%z_lo))
    call field('hrt_zdist.z_hi', c_loc(zd), c_loc(zd%z_hi), c_sizeof(zd%z_hi))
    call field('hrt_zdist.sigma_dex', c_loc(zd), c_loc(zd%sigma_dex), c_sizeof(zd%sigma_dex))
    call type_size('hrt_pop_spec', c_sizeof(ps))
    call field('hrt_pop_spec.imf', c_loc(ps), c_loc(ps%imf), c_sizeof(ps%imf))
    call field('hrt_pop_spec.sfh', c_loc(ps), c_loc(ps%sfh), c_sizeof(ps%sfh))
    call field('hrt_pop_spec.zdist', c_loc(ps), c_loc(ps%zdist), c_sizeof(ps%zdist))
    call field('hrt_pop_spec.n_stars', c_loc(ps), c_loc(ps%n_stars), c_sizeof(ps%n_stars))
    call field('hrt_pop_spec.seed', c_loc(ps), c_loc(ps%seed), c_sizeof(ps%seed))
    call field('hrt_pop_spec.chunk_size', c_loc(ps), c_loc(ps%chunk_size), c_sizeof(ps%chunk_size))
    call type_size('hrt_pop_sum', c_sizeof(su))
    call field('hrt_pop_sum.hi', c_loc(su), c_loc(su%hi), c_sizeof(su%hi))
    call field('hrt_pop_sum.lo', c_loc(su), c_loc(su%lo), c_sizeof(su%lo))
    call type_size('hrt_pop_hr', c_sizeof(hr))
    call field('hrt_pop_hr.log_teff_k_lo', c_loc(hr), c_loc(hr%log_teff_k_lo), c_sizeof(hr%log_teff_k_lo))
    call field('hrt_pop_hr.log_teff_k_hi', c_loc(hr), c_loc(hr%log_teff_k_hi), c_sizeof(hr%log_teff_k_hi))
    call field('hrt_pop_hr.log_l_lsun_lo', c_loc(hr), c_loc(hr%log_l_lsun_lo), c_sizeof(hr%log_l_lsun_lo))
    call field('hrt_pop_hr.log_l_lsun_hi', c_loc(hr), c_loc(hr%log_l_lsun_hi), c_sizeof(hr%log_l_lsun_hi))
    call field('hrt_pop_hr.nx', c_loc(hr), c_loc(hr%nx), c_sizeof(hr%nx))
    call field('hrt_pop_hr.ny', c_loc(hr), c_loc(hr%ny), c_sizeof(hr%ny))
    call type_size('hrt_pop_summary', c_sizeof(sm))
    call field('hrt_pop_summary.struct_size', c_loc(sm), c_loc(sm%struct_size), c_sizeof(sm%struct_size))
    call field('hrt_pop_summary.age_yr', c_loc(sm), c_loc(sm%age_yr), c_sizeof(sm%age_yr))
    call field('hrt_pop_summary.n_drawn', c_loc(sm), c_loc(sm%n_drawn), c_sizeof(sm%n_drawn))
    call field('hrt_pop_summary.n_unborn', c_loc(sm), c_loc(sm%n_unborn), c_sizeof(sm%n_unborn))
    call field('hrt_pop_summary.n_evaluated', c_loc(sm), c_loc(sm%n_evaluated), c_sizeof(sm%n_evaluated))
    call field('hrt_pop_summary.n_status', c_loc(sm), c_loc(sm%n_status), c_sizeof(sm%n_status))
    call field('hrt_pop_summary.failed_initial_mass_msun', c_loc(sm), c_loc(sm%failed_initial_mass_msun), &
         c_sizeof(sm%failed_initial_mass_msun))
    call field('hrt_pop_summary.n_phase', c_loc(sm), c_loc(sm%n_phase), c_sizeof(sm%n_phase))
    call field('hrt_pop_summary.phase_initial_mass_msun', c_loc(sm), c_loc(sm%phase_initial_mass_msun), &
         c_sizeof(sm%phase_initial_mass_msun))
    call field('hrt_pop_summary.phase_mass_msun', c_loc(sm), c_loc(sm%phase_mass_msun), c_sizeof(sm%phase_mass_msun))
    call field('hrt_pop_summary.phase_l_lsun', c_loc(sm), c_loc(sm%phase_l_lsun), c_sizeof(sm%phase_l_lsun))
    call field('hrt_pop_summary.n_remnant', c_loc(sm), c_loc(sm%n_remnant), c_sizeof(sm%n_remnant))
    call field('hrt_pop_summary.remnant_mass_msun', c_loc(sm), c_loc(sm%remnant_mass_msun), &
         c_sizeof(sm%remnant_mass_msun))
    call field('hrt_pop_summary.initial_mass_msun', c_loc(sm), c_loc(sm%initial_mass_msun), &
         c_sizeof(sm%initial_mass_msun))
    call field('hrt_pop_summary.mass_msun', c_loc(sm), c_loc(sm%mass_msun), c_sizeof(sm%mass_msun))
    call field('hrt_pop_summary.l_lsun', c_loc(sm), c_loc(sm%l_lsun), c_sizeof(sm%l_lsun))
    call field('hrt_pop_summary.ms_max_initial_mass_msun', c_loc(sm), c_loc(sm%ms_max_initial_mass_msun), &
         c_sizeof(sm%ms_max_initial_mass_msun))
    call field('hrt_pop_summary.evolved_min_initial_mass_msun', c_loc(sm), c_loc(sm%evolved_min_initial_mass_msun), &
         c_sizeof(sm%evolved_min_initial_mass_msun))
    call field('hrt_pop_summary.hr', c_loc(sm), c_loc(sm%hr), c_sizeof(sm%hr))
    call field('hrt_pop_summary.hr_outside', c_loc(sm), c_loc(sm%hr_outside), c_sizeof(sm%hr_outside))
    call field('hrt_pop_summary.hr_count', c_loc(sm), c_loc(sm%hr_count), c_sizeof(sm%hr_count))
    call type_size('hrt_fit_model_options', c_sizeof(mo))
    call field('hrt_fit_model_options.mass_prior', c_loc(mo), c_loc(mo%mass_prior), c_sizeof(mo%mass_prior))
    call field('hrt_fit_model_options.reserved_', c_loc(mo), c_loc(mo%reserved_), c_sizeof(mo%reserved_))
    call field('hrt_fit_model_options.mass_min_msun', c_loc(mo), c_loc(mo%mass_min_msun), c_sizeof(mo%mass_min_msun))
    call field('hrt_fit_model_options.mass_max_msun', c_loc(mo), c_loc(mo%mass_max_msun), c_sizeof(mo%mass_max_msun))
    call field('hrt_fit_model_options.age_max_yr', c_loc(mo), c_loc(mo%age_max_yr), c_sizeof(mo%age_max_yr))
    call field('hrt_fit_model_options.feh_min', c_loc(mo), c_loc(mo%feh_min), c_sizeof(mo%feh_min))
    call field('hrt_fit_model_options.feh_max', c_loc(mo), c_loc(mo%feh_max), c_sizeof(mo%feh_max))
    call field('hrt_fit_model_options.feh_step_dex', c_loc(mo), c_loc(mo%feh_step_dex), c_sizeof(mo%feh_step_dex))
    call field('hrt_fit_model_options.log_mass_step_dex', c_loc(mo), c_loc(mo%log_mass_step_dex), &
         c_sizeof(mo%log_mass_step_dex))
    call type_size('hrt_fit_obs', c_sizeof(ob))
    call field('hrt_fit_obs.teff_k', c_loc(ob), c_loc(ob%teff_k), c_sizeof(ob%teff_k))
    call field('hrt_fit_obs.teff_k_sigma', c_loc(ob), c_loc(ob%teff_k_sigma), c_sizeof(ob%teff_k_sigma))
    call field('hrt_fit_obs.log_l_lsun', c_loc(ob), c_loc(ob%log_l_lsun), c_sizeof(ob%log_l_lsun))
    call field('hrt_fit_obs.log_l_lsun_sigma', c_loc(ob), c_loc(ob%log_l_lsun_sigma), c_sizeof(ob%log_l_lsun_sigma))
    call field('hrt_fit_obs.feh', c_loc(ob), c_loc(ob%feh), c_sizeof(ob%feh))
    call field('hrt_fit_obs.feh_sigma', c_loc(ob), c_loc(ob%feh_sigma), c_sizeof(ob%feh_sigma))
    call field('hrt_fit_obs.log_g_cgs', c_loc(ob), c_loc(ob%log_g_cgs), c_sizeof(ob%log_g_cgs))
    call field('hrt_fit_obs.log_g_cgs_sigma', c_loc(ob), c_loc(ob%log_g_cgs_sigma), c_sizeof(ob%log_g_cgs_sigma))
    call field('hrt_fit_obs.flux_w_m2', c_loc(ob), c_loc(ob%flux_w_m2), c_sizeof(ob%flux_w_m2))
    call field('hrt_fit_obs.flux_w_m2_sigma', c_loc(ob), c_loc(ob%flux_w_m2_sigma), c_sizeof(ob%flux_w_m2_sigma))
    call field('hrt_fit_obs.mbol', c_loc(ob), c_loc(ob%mbol), c_sizeof(ob%mbol))
    call field('hrt_fit_obs.mbol_sigma', c_loc(ob), c_loc(ob%mbol_sigma), c_sizeof(ob%mbol_sigma))
    call field('hrt_fit_obs.distance_pc', c_loc(ob), c_loc(ob%distance_pc), c_sizeof(ob%distance_pc))
    call field('hrt_fit_obs.distance_pc_sigma', c_loc(ob), c_loc(ob%distance_pc_sigma), c_sizeof(ob%distance_pc_sigma))
    call field('hrt_fit_obs.parallax_mas', c_loc(ob), c_loc(ob%parallax_mas), c_sizeof(ob%parallax_mas))
    call field('hrt_fit_obs.parallax_mas_sigma', c_loc(ob), c_loc(ob%parallax_mas_sigma), &
         c_sizeof(ob%parallax_mas_sigma))
    call type_size('hrt_fit_interval', c_sizeof(iv))
    call field('hrt_fit_interval.median', c_loc(iv), c_loc(iv%median), c_sizeof(iv%median))
    call field('hrt_fit_interval.lo', c_loc(iv), c_loc(iv%lo), c_sizeof(iv%lo))
    call field('hrt_fit_interval.hi', c_loc(iv), c_loc(iv%hi), c_sizeof(iv%hi))
    call type_size('hrt_fit_sample', c_sizeof(sa))
    call field('hrt_fit_sample.initial_mass_msun', c_loc(sa), c_loc(sa%initial_mass_msun), c_sizeof(sa%initial_mass_msun))
    call field('hrt_fit_sample.z', c_loc(sa), c_loc(sa%z), c_sizeof(sa%z))
    call field('hrt_fit_sample.age_yr', c_loc(sa), c_loc(sa%age_yr), c_sizeof(sa%age_yr))
    call field('hrt_fit_sample.log_l_lsun', c_loc(sa), c_loc(sa%log_l_lsun), c_sizeof(sa%log_l_lsun))
    call field('hrt_fit_sample.log_teff_k', c_loc(sa), c_loc(sa%log_teff_k), c_sizeof(sa%log_teff_k))
    call field('hrt_fit_sample.phase', c_loc(sa), c_loc(sa%phase), c_sizeof(sa%phase))
    call field('hrt_fit_sample.reserved_', c_loc(sa), c_loc(sa%reserved_), c_sizeof(sa%reserved_))
    call type_size('hrt_fit_result', c_sizeof(fr))
    call field('hrt_fit_result.struct_size', c_loc(fr), c_loc(fr%struct_size), c_sizeof(fr%struct_size))
    call field('hrt_fit_result.status', c_loc(fr), c_loc(fr%status), c_sizeof(fr%status))
    call field('hrt_fit_result.flags', c_loc(fr), c_loc(fr%flags), c_sizeof(fr%flags))
    call field('hrt_fit_result.phase', c_loc(fr), c_loc(fr%phase), c_sizeof(fr%phase))
    call field('hrt_fit_result.phase_second', c_loc(fr), c_loc(fr%phase_second), c_sizeof(fr%phase_second))
    call field('hrt_fit_result.n_obs', c_loc(fr), c_loc(fr%n_obs), c_sizeof(fr%n_obs))
    call field('hrt_fit_result.initial_mass_msun', c_loc(fr), c_loc(fr%initial_mass_msun), c_sizeof(fr%initial_mass_msun))
    call field('hrt_fit_result.age_yr', c_loc(fr), c_loc(fr%age_yr), c_sizeof(fr%age_yr))
    call field('hrt_fit_result.feh', c_loc(fr), c_loc(fr%feh), c_sizeof(fr%feh))
    call field('hrt_fit_result.mass_msun', c_loc(fr), c_loc(fr%mass_msun), c_sizeof(fr%mass_msun))
    call field('hrt_fit_result.r_rsun', c_loc(fr), c_loc(fr%r_rsun), c_sizeof(fr%r_rsun))
    call field('hrt_fit_result.log_l_lsun', c_loc(fr), c_loc(fr%log_l_lsun), c_sizeof(fr%log_l_lsun))
    call field('hrt_fit_result.teff_k', c_loc(fr), c_loc(fr%teff_k), c_sizeof(fr%teff_k))
    call field('hrt_fit_result.log_g_cgs', c_loc(fr), c_loc(fr%log_g_cgs), c_sizeof(fr%log_g_cgs))
    call field('hrt_fit_result.distance_pc', c_loc(fr), c_loc(fr%distance_pc), c_sizeof(fr%distance_pc))
    call field('hrt_fit_result.phase_prob', c_loc(fr), c_loc(fr%phase_prob), c_sizeof(fr%phase_prob))
    call field('hrt_fit_result.phase_mass_msun', c_loc(fr), c_loc(fr%phase_mass_msun), c_sizeof(fr%phase_mass_msun))
    call field('hrt_fit_result.phase_age_yr', c_loc(fr), c_loc(fr%phase_age_yr), c_sizeof(fr%phase_age_yr))
    call field('hrt_fit_result.chi2_min', c_loc(fr), c_loc(fr%chi2_min), c_sizeof(fr%chi2_min))
    call field('hrt_fit_result.n_eff', c_loc(fr), c_loc(fr%n_eff), c_sizeof(fr%n_eff))
    call field('hrt_fit_result.n_points', c_loc(fr), c_loc(fr%n_points), c_sizeof(fr%n_points))
    call field('hrt_fit_result.reserved', c_loc(fr), c_loc(fr%reserved), c_sizeof(fr%reserved))
    call type_size('hrt_forecast_state', c_sizeof(fs))
    call field('hrt_forecast_state.dt_yr', c_loc(fs), c_loc(fs%dt_yr), c_sizeof(fs%dt_yr))
    call field('hrt_forecast_state.phase', c_loc(fs), c_loc(fs%phase), c_sizeof(fs%phase))
    call field('hrt_forecast_state.reserved_', c_loc(fs), c_loc(fs%reserved_), c_sizeof(fs%reserved_))
    call field('hrt_forecast_state.phase_prob', c_loc(fs), c_loc(fs%phase_prob), c_sizeof(fs%phase_prob))
    call field('hrt_forecast_state.luminous_frac', c_loc(fs), c_loc(fs%luminous_frac), c_sizeof(fs%luminous_frac))
    call field('hrt_forecast_state.log_l_lsun', c_loc(fs), c_loc(fs%log_l_lsun), c_sizeof(fs%log_l_lsun))
    call field('hrt_forecast_state.teff_k', c_loc(fs), c_loc(fs%teff_k), c_sizeof(fs%teff_k))
    call field('hrt_forecast_state.r_rsun', c_loc(fs), c_loc(fs%r_rsun), c_sizeof(fs%r_rsun))
    call field('hrt_forecast_state.mass_msun', c_loc(fs), c_loc(fs%mass_msun), c_sizeof(fs%mass_msun))
    call type_size('hrt_forecast_event', c_sizeof(fe))
    call field('hrt_forecast_event.name', c_loc(fe), c_loc(fe%name), c_sizeof(fe%name))
    call field('hrt_forecast_event.prob', c_loc(fe), c_loc(fe%prob), c_sizeof(fe%prob))
    call field('hrt_forecast_event.in_yr', c_loc(fe), c_loc(fe%in_yr), c_sizeof(fe%in_yr))
    call type_size('hrt_ms_options', c_sizeof(mso))
    call field('hrt_ms_options.age_min_yr', c_loc(mso), c_loc(mso%age_min_yr), c_sizeof(mso%age_min_yr))
    call field('hrt_ms_options.age_max_yr', c_loc(mso), c_loc(mso%age_max_yr), c_sizeof(mso%age_max_yr))
    call field('hrt_ms_options.imf_alpha', c_loc(mso), c_loc(mso%imf_alpha), c_sizeof(mso%imf_alpha))
    call field('hrt_ms_options.n_masses', c_loc(mso), c_loc(mso%n_masses), c_sizeof(mso%n_masses))
    call field('hrt_ms_options.n_ages', c_loc(mso), c_loc(mso%n_ages), c_sizeof(mso%n_ages))
    call field('hrt_ms_options.reserved', c_loc(mso), c_loc(mso%reserved), c_sizeof(mso%reserved))
    call type_size('hrt_ms_value', c_sizeof(msv))
    call field('hrt_ms_value.median', c_loc(msv), c_loc(msv%median), c_sizeof(msv%median))
    call field('hrt_ms_value.lo', c_loc(msv), c_loc(msv%lo), c_sizeof(msv%lo))
    call field('hrt_ms_value.hi', c_loc(msv), c_loc(msv%hi), c_sizeof(msv%hi))
    call field('hrt_ms_value.band_lo', c_loc(msv), c_loc(msv%band_lo), c_sizeof(msv%band_lo))
    call field('hrt_ms_value.band_hi', c_loc(msv), c_loc(msv%band_hi), c_sizeof(msv%band_hi))
    call type_size('hrt_ms_estimate', c_sizeof(mse))
    call field('hrt_ms_estimate.status', c_loc(mse), c_loc(mse%status), c_sizeof(mse%status))
    call field('hrt_ms_estimate.n_models', c_loc(mse), c_loc(mse%n_models), c_sizeof(mse%n_models))
    call field('hrt_ms_estimate.z', c_loc(mse), c_loc(mse%z), c_sizeof(mse%z))
    call field('hrt_ms_estimate.log_l_lsun', c_loc(mse), c_loc(mse%log_l_lsun), c_sizeof(mse%log_l_lsun))
    call field('hrt_ms_estimate.log_teff_k', c_loc(mse), c_loc(mse%log_teff_k), c_sizeof(mse%log_teff_k))
    call field('hrt_ms_estimate.log_r_rsun', c_loc(mse), c_loc(mse%log_r_rsun), c_sizeof(mse%log_r_rsun))
    call field('hrt_ms_estimate.log_g_cgs', c_loc(mse), c_loc(mse%log_g_cgs), c_sizeof(mse%log_g_cgs))
    call field('hrt_ms_estimate.mass_msun', c_loc(mse), c_loc(mse%mass_msun), c_sizeof(mse%mass_msun))
    call field('hrt_ms_estimate.initial_mass_msun', c_loc(mse), c_loc(mse%initial_mass_msun), &
         c_sizeof(mse%initial_mass_msun))
    call field('hrt_ms_estimate.age_yr', c_loc(mse), c_loc(mse%age_yr), c_sizeof(mse%age_yr))
    call field('hrt_ms_estimate.reserved', c_loc(mse), c_loc(mse%reserved), c_sizeof(mse%reserved))
    call type_size('hrt_ms_distance_result', c_sizeof(msd))
    call field('hrt_ms_distance_result.status', c_loc(msd), c_loc(msd%status), c_sizeof(msd%status))
    call field('hrt_ms_distance_result.n_models', c_loc(msd), c_loc(msd%n_models), c_sizeof(msd%n_models))
    call field('hrt_ms_distance_result.distance_pc', c_loc(msd), c_loc(msd%distance_pc), c_sizeof(msd%distance_pc))
    call field('hrt_ms_distance_result.parallax_mas', c_loc(msd), c_loc(msd%parallax_mas), &
         c_sizeof(msd%parallax_mas))
    call field('hrt_ms_distance_result.reserved', c_loc(msd), c_loc(msd%reserved), c_sizeof(msd%reserved))
    call type_size('hrt_forecast_phase', c_sizeof(fp))
    call field('hrt_forecast_phase.prob', c_loc(fp), c_loc(fp%prob), c_sizeof(fp%prob))
    call field('hrt_forecast_phase.start_in_yr', c_loc(fp), c_loc(fp%start_in_yr), c_sizeof(fp%start_in_yr))
    call field('hrt_forecast_phase.duration_yr', c_loc(fp), c_loc(fp%duration_yr), c_sizeof(fp%duration_yr))
    call type_size('hrt_forecast_result', c_sizeof(fo))
    call field('hrt_forecast_result.struct_size', c_loc(fo), c_loc(fo%struct_size), c_sizeof(fo%struct_size))
    call field('hrt_forecast_result.status', c_loc(fo), c_loc(fo%status), c_sizeof(fo%status))
    call field('hrt_forecast_result.remnant', c_loc(fo), c_loc(fo%remnant), c_sizeof(fo%remnant))
    call field('hrt_forecast_result.phase_now', c_loc(fo), c_loc(fo%phase_now), c_sizeof(fo%phase_now))
    call field('hrt_forecast_result.n_samples', c_loc(fo), c_loc(fo%n_samples), c_sizeof(fo%n_samples))
    call field('hrt_forecast_result.phase_now_prob', c_loc(fo), c_loc(fo%phase_now_prob), c_sizeof(fo%phase_now_prob))
    call field('hrt_forecast_result.ms_prob', c_loc(fo), c_loc(fo%ms_prob), c_sizeof(fo%ms_prob))
    call field('hrt_forecast_result.ms_left_yr', c_loc(fo), c_loc(fo%ms_left_yr), c_sizeof(fo%ms_left_yr))
    call field('hrt_forecast_result.end_in_yr', c_loc(fo), c_loc(fo%end_in_yr), c_sizeof(fo%end_in_yr))
    call field('hrt_forecast_result.future', c_loc(fo), c_loc(fo%future), c_sizeof(fo%future))
    call field('hrt_forecast_result.n_events', c_loc(fo), c_loc(fo%n_events), c_sizeof(fo%n_events))
    call field('hrt_forecast_result.events', c_loc(fo), c_loc(fo%events), c_sizeof(fo%events))
    call field('hrt_forecast_result.remnant_prob', c_loc(fo), c_loc(fo%remnant_prob), c_sizeof(fo%remnant_prob))
    call field('hrt_forecast_result.remnant_mass_msun', c_loc(fo), c_loc(fo%remnant_mass_msun), &
         c_sizeof(fo%remnant_mass_msun))
    call field('hrt_forecast_result.reserved', c_loc(fo), c_loc(fo%reserved), c_sizeof(fo%reserved))
    call import_layout()
    call accuracy_layout()
    call expect(fields_checked == svc_n_fields(), 'every field of the C table is checked here')
    call expect(types_checked == svc_n_types(), 'every type of the C table is checked here')
  end subroutine test_layout

  subroutine accuracy_layout()
    type(hrt_accuracy_row), target :: r
    type(hrt_interp_error), target :: e
    call type_size('hrt_accuracy_row', c_sizeof(r))
    call field('hrt_accuracy_row.interp', c_loc(r), c_loc(r%interp), c_sizeof(r%interp))
    call field('hrt_accuracy_row.route', c_loc(r), c_loc(r%route), c_sizeof(r%route))
    call field('hrt_accuracy_row.phase', c_loc(r), c_loc(r%phase), c_sizeof(r%phase))
    call field('hrt_accuracy_row.n_points', c_loc(r), c_loc(r%n_points), c_sizeof(r%n_points))
    call field('hrt_accuracy_row.n_tracks', c_loc(r), c_loc(r%n_tracks), c_sizeof(r%n_tracks))
    call field('hrt_accuracy_row.median', c_loc(r), c_loc(r%median), c_sizeof(r%median))
    call field('hrt_accuracy_row.p95', c_loc(r), c_loc(r%p95), c_sizeof(r%p95))
    call field('hrt_accuracy_row.max', c_loc(r), c_loc(r%max), c_sizeof(r%max))
    call field('hrt_accuracy_row.worst_mass_msun', c_loc(r), c_loc(r%worst_mass_msun), c_sizeof(r%worst_mass_msun))
    call field('hrt_accuracy_row.worst_z', c_loc(r), c_loc(r%worst_z), c_sizeof(r%worst_z))
    call field('hrt_accuracy_row.worst_eep', c_loc(r), c_loc(r%worst_eep), c_sizeof(r%worst_eep))
    call field('hrt_accuracy_row.wd_mass_max_msun', c_loc(r), c_loc(r%wd_mass_max_msun), c_sizeof(r%wd_mass_max_msun))
    call type_size('hrt_interp_error', c_sizeof(e))
    call field('hrt_interp_error.log_l_dex', c_loc(e), c_loc(e%log_l_dex), c_sizeof(e%log_l_dex))
    call field('hrt_interp_error.log_teff_dex', c_loc(e), c_loc(e%log_teff_dex), c_sizeof(e%log_teff_dex))
    call field('hrt_interp_error.log_age_dex', c_loc(e), c_loc(e%log_age_dex), c_sizeof(e%log_age_dex))
    call field('hrt_interp_error.n_tracks', c_loc(e), c_loc(e%n_tracks), c_sizeof(e%n_tracks))
    call field('hrt_interp_error.reserved', c_loc(e), c_loc(e%reserved), c_sizeof(e%reserved))
  end subroutine accuracy_layout

  !> Leave-one-out accuracy (hrtf_accuracy) of one metallicity group of the default grid, one type;
  !> the interpolation error the default grid stores (hrtf_interp_error) against the C call.
  subroutine test_accuracy()
    type(hrt_grid_t) :: g
    type(hrt_accuracy_row), allocatable :: rows(:)
    type(hrt_state), allocatable :: st(:)
    type(hrt_interp_error) :: e, ce
    type(hrt_error) :: err
    real(c_double) :: z
    character(len=256) :: msg
    integer :: stat, i, q, rc
    logical :: ok
    call hrtf_open(g, trim(grid_path), interp=HRT_INTERP_LINEAR, stat=stat, errmsg=msg)
    call expect(stat == HRT_OK, 'open the grid with linear interpolation: ' // trim(msg))
    if (stat /= HRT_OK) return
    z = hrt_grid_z(g%ptr, 0_c_size_t)
    call hrtf_accuracy(g, rows, interp=HRT_INTERP_LINEAR, threads=2, z=z, stat=stat, errmsg=msg)
    call expect(stat == HRT_OK .and. size(rows) > 0, 'hrtf_accuracy of one group: ' // trim(msg))
    ok = .true.
    do i = 1, size(rows)
       ok = ok .and. rows(i)%interp == HRT_INTERP_LINEAR .and. rows(i)%n_points > 0
       do q = 1, HRT_ACCURACY_NQ
          ok = ok .and. rows(i)%median(q) <= rows(i)%p95(q) .and. rows(i)%p95(q) <= rows(i)%max(q) .and. &
               same(rows(i)%worst_z(q), z)
       end do
    end do
    call expect(ok, 'accuracy rows: the type and group asked, median <= p95 <= max')
    call hrtf_accuracy(g, rows, interp=HRT_INTERP_LINEAR, z=z, store_path='/nonexistent-hrtrail-dir/g.h5', &
         stat=stat, errmsg=msg)
    call expect(stat == HRT_E_IO .and. index(msg, '/nonexistent-hrtrail-dir/g.h5') > 0, &
         'storing in a file that cannot be written fails naming it: ' // trim(msg))
    call hrtf_accuracy(g, rows, interp=9, stat=stat, errmsg=msg)
    call expect(stat == HRT_E_INVALID .and. index(msg, 'interpolation type') > 0, 'an unknown type: ' // trim(msg))
    ! the stored field of the default grid
    call expect(hrtf_has_interp_error(g), 'the default grid stores an error field for linear')
    call hrtf_evaluate(g, [1.2_c_double, 1.2_c_double], [1e9_c_double, 1e12_c_double], 0.014_c_double, st, stat, msg)
    call expect(stat == HRT_OK, 'evaluate: ' // trim(msg))
    call hrtf_interp_error(g, st(1), e, stat, msg)
    err%code = 0
    rc = hrt_state_interp_error(g%ptr, st(1), ce, err)
    call expect(stat == HRT_OK .and. rc == HRT_OK .and. same(e%log_l_dex, ce%log_l_dex) .and. &
         same(e%log_teff_dex, ce%log_teff_dex) .and. same(e%log_age_dex, ce%log_age_dex) .and. e%n_tracks >= 1, &
         'hrtf_interp_error equals the C call: ' // trim(msg))
    call expect(e%log_l_dex >= 0 .and. e%log_l_dex < 0.1_c_double, 'a main-sequence estimate below 0.1 dex')
    call hrtf_interp_error(g, st(2), e, stat, msg)
    call expect(stat == HRT_E_DOMAIN .and. index(msg, 'not on a track') > 0 .and. ieee_is_nan(e%log_l_dex), &
         'a remnant has no estimate (NaN, HRT_E_DOMAIN): ' // trim(msg))
    call hrtf_close(g)
  end subroutine test_accuracy

  subroutine import_layout()
    type(hrt_import_track_report), target :: t
    type(hrt_import_row_report), target :: w
    call type_size('hrt_import_track_report', c_sizeof(t))
    call field('hrt_import_track_report.file', c_loc(t), c_loc(t%file), c_sizeof(t%file))
    call field('hrt_import_track_report.status', c_loc(t), c_loc(t%status), c_sizeof(t%status))
    call field('hrt_import_track_report.line', c_loc(t), c_loc(t%line), c_sizeof(t%line))
    call field('hrt_import_track_report.column', c_loc(t), c_loc(t%column), c_sizeof(t%column))
    call field('hrt_import_track_report.message', c_loc(t), c_loc(t%message), c_sizeof(t%message))
    call field('hrt_import_track_report.notes', c_loc(t), c_loc(t%notes), c_sizeof(t%notes))
    call field('hrt_import_track_report.initial_mass_msun', c_loc(t), c_loc(t%initial_mass_msun), &
         c_sizeof(t%initial_mass_msun))
    call field('hrt_import_track_report.z', c_loc(t), c_loc(t%z), c_sizeof(t%z))
    call field('hrt_import_track_report.route', c_loc(t), c_loc(t%route), c_sizeof(t%route))
    call field('hrt_import_track_report.truncated', c_loc(t), c_loc(t%truncated), c_sizeof(t%truncated))
    call field('hrt_import_track_report.remnant', c_loc(t), c_loc(t%remnant), c_sizeof(t%remnant))
    call field('hrt_import_track_report.remnant_mass_msun', c_loc(t), c_loc(t%remnant_mass_msun), &
         c_sizeof(t%remnant_mass_msun))
    call field('hrt_import_track_report.n_rows', c_loc(t), c_loc(t%n_rows), c_sizeof(t%n_rows))
    call field('hrt_import_track_report.n_rows_dropped', c_loc(t), c_loc(t%n_rows_dropped), c_sizeof(t%n_rows_dropped))
    call field('hrt_import_track_report.n_keypoints', c_loc(t), c_loc(t%n_keypoints), c_sizeof(t%n_keypoints))
    call field('hrt_import_track_report.keypoint_age_yr', c_loc(t), c_loc(t%keypoint_age_yr), &
         c_sizeof(t%keypoint_age_yr))
    call field('hrt_import_track_report.keypoint_line', c_loc(t), c_loc(t%keypoint_line), c_sizeof(t%keypoint_line))
    call field('hrt_import_track_report.keypoint_how', c_loc(t), c_loc(t%keypoint_how), c_sizeof(t%keypoint_how))
    call field('hrt_import_track_report.missing', c_loc(t), c_loc(t%missing), c_sizeof(t%missing))
    call type_size('hrt_import_row_report', c_sizeof(w))
    call field('hrt_import_row_report.line', c_loc(w), c_loc(w%line), c_sizeof(w%line))
    call field('hrt_import_row_report.column', c_loc(w), c_loc(w%column), c_sizeof(w%column))
    call field('hrt_import_row_report.code', c_loc(w), c_loc(w%code), c_sizeof(w%code))
    call field('hrt_import_row_report.message', c_loc(w), c_loc(w%message), c_sizeof(w%message))
  end subroutine import_layout

  !> Text tracks written here from the grid's own EEP tracks (every fourth track of the group
  !> at Z_ref: vocabulary columns, phase codes, keypoints flagged at their EEPs), imported by the
  !> module and by C with the same map: the same status, message, reports (file pointers aside)
  !> and grid file, byte for byte; the imported grid opens and has the default routes.
  subroutine test_import()
    character(len=*), parameter :: fgrid = 'test_services_import_f.h5', cgrid = 'test_services_import_c.h5'
    integer, parameter :: width = 64
    type(hrt_grid_t) :: g, imported
    type(hrt_star_t) :: s
    type(hrt_import_t) :: imp
    type(hrt_state), allocatable :: track(:)
    type(hrt_import_track_report), allocatable :: frep(:), crep(:)
    real(c_double), allocatable :: zg(:), m(:)
    character(len=width), allocatable :: names(:)
    character(kind=c_char), allocatable :: cnames(:)
    character(kind=c_char) :: cmsg(256)
    character(len=256) :: msg
    character(len=32) :: kp, zs, ms
    character(len=:), allocatable :: map
    integer(c_int8_t), allocatable :: fbytes(:), cbytes(:)
    integer :: iz, i, j, k, n, u, stat, rc, route, nk
    integer(c_long) :: e
    integer(c_size_t), target :: files_done(2)
    real(c_double) :: zimp
    files_done = 0
    call hrtf_open(g, trim(grid_path))
    allocate (zg(hrt_grid_n_z(g%ptr)))
    zg(:) = hrtf_z_values(g)
    iz = minloc(abs(log(zg / hrt_grid_z_ref(g%ptr))), 1)
    allocate (m(hrt_grid_n_masses(g%ptr, int(iz - 1, c_size_t))))
    m(:) = hrtf_grid_masses(g, iz)
    n = (size(m) + 3) / 4
    allocate (names(n))
    do i = 1, n
       j = 4 * (i - 1) + 1
       write (zs, '(es23.16)') zg(iz)
       write (ms, '(es23.16)') m(j)
       names(i) = 'trk_z' // trim(adjustl(zs)) // '_m' // trim(adjustl(ms)) // '.csv'
       call hrtf_star_new(s, g, m(j), zg(iz))
       call hrtf_star_track(s, track)
       route = hrt_star_route(s%ptr)
       nk = int(hrt_grid_route_n_keypoints(g%ptr, int(route, c_size_t)))
       open (newunit=u, file=trim(names(i)), status='replace', action='write')
       write (u, '(a)') 'age_yr,log_l_lsun,log_teff_k,mass_msun,he_core_mass_msun,co_core_mass_msun,phase,keypoints'
       do j = 1, size(track)
          kp = '-'
          do k = 1, nk
             e = hrt_grid_keypoint_eep(g%ptr, int(route, c_size_t), int(k - 1, c_size_t))
             if (e == j - 1) kp = hrtf_string(hrt_grid_keypoint_name(g%ptr, int(route, c_size_t), int(k - 1, c_size_t)))
          end do
          write (u, '(6(es25.17,","),i0,",",a)') track(j)%age_yr, track(j)%log_l_lsun, track(j)%log_teff_k, &
               track(j)%mass_msun, track(j)%he_core_mass_msun, track(j)%co_core_mass_msun, track(j)%phase, trim(kp)
       end do
       close (u)
       call hrtf_star_free(s)
    end do
    map = 'pattern=trk_z{z}_m{mass}.csv keypoints=keypoints'
    ! Fortran
    call hrtf_import_new(imp)
    call hrtf_import_map(imp, map)
    call hrtf_import_settings(imp, force=.true., pre_ms=.true.)
    do i = 1, n
       call hrtf_import_add_file(imp, trim(names(i)))
    end do
    rc = hrt_import_set_progress(imp%ptr, c_funloc(count_files), c_loc(files_done))
    call hrtf_import_run(imp, fgrid, stat, msg)
    call expect(rc == HRT_OK .and. files_done(1) == n .and. files_done(2) == n, &
         'the progress callback (a Fortran procedure) is called once per file with the total')
    call hrtf_import_report(imp, frep)
    call expect(stat == HRT_OK, 'hrtf_import_run of the grid''s own tracks: ' // trim(msg))
    call expect(size(frep) == n .and. all(frep%status == HRT_OK), 'every track imported')
    if (size(frep) > 0) call expect(hrtf_string(frep(1)%file) == trim(names(1)), 'report names the file')
    zimp = hrt_import_z(imp%ptr, 0_c_size_t)
    call expect(int(hrt_import_n_z(imp%ptr)) == 1 .and. same(zimp, zg(iz)), 'one metallicity group, of the files'' Z')
    frep%file = c_null_ptr
    call hrtf_import_free(imp)
    ! C
    allocate (cnames(n * width), crep(n))
    cnames = c_null_char
    do i = 1, n
       do k = 1, len_trim(names(i))
          cnames((i - 1) * width + k) = names(i)(k:k)
       end do
    end do
    rc = svc_import(int(n, c_size_t), cnames, int(width, c_size_t), cstr(map), cstr(cgrid), crep, cmsg)
    call expect(rc == stat .and. trim(msg) == c_text(cmsg), 'the import from C: the same status and message')
    call expect_bytes(transfer(frep, [byte]), transfer(crep, [byte]), 'import reports equal C''s')
    call read_bytes(fgrid, fbytes)
    call read_bytes(cgrid, cbytes)
    call expect(size(fbytes) > 0, 'the imported grid was written')
    call expect_bytes(fbytes, cbytes, 'the grid imported from Fortran is the grid imported from C, byte for byte')
    call hrtf_open(imported, fgrid, stat=stat, errmsg=msg)
    call expect(stat == HRT_OK, 'the imported grid opens: ' // trim(msg))
    if (stat == HRT_OK) then
       call expect(hrtf_route_name(imported, 0) == hrtf_route_name(g, 0), 'the imported grid has the default routes')
       call hrtf_close(imported)
    end if
    ! errors: a missing file fails the run and names it
    call hrtf_import_new(imp)
    call hrtf_import_add_file(imp, '/nonexistent/track.csv', 0.014_c_double)
    call hrtf_import_run(imp, stat=stat, errmsg=msg)
    call expect(stat /= HRT_OK .and. index(msg, '/nonexistent/track.csv') > 0, &
         'import of a missing file fails naming it: ' // trim(msg))
    call hrtf_import_map(imp, 'no_such_key=3', stat=stat, errmsg=msg)
    call expect(stat /= HRT_OK .and. len_trim(msg) > 0, 'an unknown map key is refused: ' // trim(msg))
    call hrtf_import_free(imp)
    do i = 1, n
       open (newunit=u, file=trim(names(i)), status='old', iostat=stat)
       if (stat == 0) close (u, status='delete')
    end do
    do k = 1, 2
       open (newunit=u, file=merge(fgrid, cgrid, k == 1), status='old', iostat=stat)
       if (stat == 0) close (u, status='delete')
    end do
    call hrtf_close(g)
  end subroutine test_import

  !> Progress callback of an import: counts the calls in user(1), keeps the total in user(2).
  subroutine count_files(user, done, total, file) bind(C)
    type(c_ptr), value :: user
    integer(c_size_t), value :: done, total
    type(c_ptr), value :: file
    integer(c_size_t), pointer :: counts(:)
    call c_f_pointer(user, counts, [2])
    counts(1) = counts(1) + 1
    counts(2) = total
    if (done > total .or. .not. c_associated(file)) counts(2) = -1
  end subroutine count_files

  subroutine read_bytes(path, bytes)
    character(len=*), intent(in) :: path
    integer(c_int8_t), allocatable, intent(out) :: bytes(:)
    integer :: u, stat, n
    open (newunit=u, file=path, access='stream', form='unformatted', status='old', action='read', iostat=stat)
    if (stat /= 0) then
       allocate (bytes(0))
       return
    end if
    inquire (unit=u, size=n)
    allocate (bytes(max(n, 0)))
    if (n > 0) read (u) bytes
    close (u)
  end subroutine read_bytes

  !> One of the module's parameters against the header's constant of that name.
  subroutine constant(name, value)
    character(len=*), intent(in) :: name
    real(c_double), intent(in) :: value
    real(c_double) :: c
    constants_checked = constants_checked + 1
    call expect(svc_constant(cstr(name), c) == 0, 'constant ' // name // ' is in the C table')
    call expect(same(c, value), 'the module''s ' // name // ' equals the header''s')
  end subroutine constant

  subroutine test_constants()
    call constant('HRT_IMF_SALPETER_1955', real(HRT_IMF_SALPETER_1955, c_double))
    call constant('HRT_IMF_KROUPA_2001', real(HRT_IMF_KROUPA_2001, c_double))
    call constant('HRT_IMF_CHABRIER_2003_SYSTEM', real(HRT_IMF_CHABRIER_2003_SYSTEM, c_double))
    call constant('HRT_IMF_POWER_LAW', real(HRT_IMF_POWER_LAW, c_double))
    call constant('HRT_SFH_BURST', real(HRT_SFH_BURST, c_double))
    call constant('HRT_SFH_CONSTANT', real(HRT_SFH_CONSTANT, c_double))
    call constant('HRT_SFH_EXPONENTIAL', real(HRT_SFH_EXPONENTIAL, c_double))
    call constant('HRT_SFH_TABLE', real(HRT_SFH_TABLE, c_double))
    call constant('HRT_ZDIST_FIXED', real(HRT_ZDIST_FIXED, c_double))
    call constant('HRT_ZDIST_LOG_UNIFORM', real(HRT_ZDIST_LOG_UNIFORM, c_double))
    call constant('HRT_ZDIST_LOG_NORMAL', real(HRT_ZDIST_LOG_NORMAL, c_double))
    call constant('HRT_IMF_MAX_SEGMENTS', real(HRT_IMF_MAX_SEGMENTS, c_double))
    call constant('HRT_POP_MAX_STATUS', real(HRT_POP_MAX_STATUS, c_double))
    call constant('HRT_POP_HR_MAX_BINS', real(HRT_POP_HR_MAX_BINS, c_double))
    call constant('HRT_CATALOGUE_CSV', real(HRT_CATALOGUE_CSV, c_double))
    call constant('HRT_CATALOGUE_HDF5', real(HRT_CATALOGUE_HDF5, c_double))
    call constant('HRT_FIT_PRIOR_KROUPA_2001', real(HRT_FIT_PRIOR_KROUPA_2001, c_double))
    call constant('HRT_FIT_PRIOR_CHABRIER_2003', real(HRT_FIT_PRIOR_CHABRIER_2003, c_double))
    call constant('HRT_FIT_PRIOR_LOG_FLAT', real(HRT_FIT_PRIOR_LOG_FLAT, c_double))
    call constant('HRT_FIT_MULTIMODAL', real(HRT_FIT_MULTIMODAL, c_double))
    call constant('HRT_FIT_MASS_EDGE', real(HRT_FIT_MASS_EDGE, c_double))
    call constant('HRT_FIT_AGE_LIMIT', real(HRT_FIT_AGE_LIMIT, c_double))
    call constant('HRT_FIT_FEH_EDGE', real(HRT_FIT_FEH_EDGE, c_double))
    call constant('HRT_FIT_POOR_MATCH', real(HRT_FIT_POOR_MATCH, c_double))
    call constant('HRT_FIT_FEW_POINTS', real(HRT_FIT_FEW_POINTS, c_double))
    call constant('HRT_FIT_MULTIMODAL_PROB', HRT_FIT_MULTIMODAL_PROB)
    call constant('HRT_FORECAST_MAX_EVENTS', real(HRT_FORECAST_MAX_EVENTS, c_double))
    call constant('HRT_IMPORT_MAX_KP', real(HRT_IMPORT_MAX_KP, c_double))
    call constant('HRT_ISOCHRONE_MAX_DLOG_L', HRT_ISOCHRONE_MAX_DLOG_L)
    call constant('HRT_PHASES_REMNANT', real(HRT_PHASES_REMNANT, c_double))
    call constant('HRT_ACCURACY_NQ', real(HRT_ACCURACY_NQ, c_double))
    call expect(constants_checked == svc_n_constants(), 'every constant of the C table is checked here')
  end subroutine test_constants

  !> Names and their inverses: each kind's name from the library maps back to the kind.
  subroutine test_names()
    integer :: k
    do k = 0, 3
       call expect(hrt_imf_from_name(cstr(hrtf_imf_name(k))) == k, 'IMF name round trip: ' // hrtf_imf_name(k))
       call expect(hrt_sfh_from_name(cstr(hrtf_sfh_name(k))) == k, 'SFH name round trip: ' // hrtf_sfh_name(k))
       call expect(hrt_interp_from_name(cstr(hrtf_string(hrt_interp_name(k)))) == k, 'interpolation name round trip')
    end do
    do k = 0, 2
       call expect(hrt_fit_mass_prior_from_name(cstr(hrtf_fit_mass_prior_name(k))) == k, &
            'mass prior name round trip: ' // hrtf_fit_mass_prior_name(k))
    end do
    call expect(hrtf_fit_mass_prior_name(17) == '', 'unknown mass prior: no name')
    do k = 0, HRT_PHASE_N - 1
       call expect(hrt_phase_from_key(cstr(hrtf_phase_key(int(hrt_phase_code(int(k, c_size_t)))))) == &
            hrt_phase_code(int(k, c_size_t)), 'phase key round trip')
    end do
    do k = 0, HRT_REMNANT_N - 1
       call expect(hrt_remnant_from_key(cstr(hrtf_string(hrt_remnant_key(hrt_remnant_code(int(k, c_size_t)))))) == &
            hrt_remnant_code(int(k, c_size_t)), 'remnant key round trip')
    end do
    call expect(hrtf_phase_bit(HRT_PHASE_WD) + hrtf_phase_bit(HRT_PHASE_NS) + hrtf_phase_bit(HRT_PHASE_BH) == &
         HRT_PHASES_REMNANT, 'HRT_PHASES_REMNANT is the bits of the remnant phases')
  end subroutine test_names

  !> The default routes as C gives them, and as the default grid (written with them) names them;
  !> the grid's tracks, routes and a star's keypoints.
  subroutine test_routes_and_keypoints()
    type(hrt_grid_t) :: g
    type(hrt_star_t) :: s
    character(len=:), allocatable :: name, kp(:), knames(:)
    integer, allocatable :: seg(:)
    real(c_double), allocatable :: m(:), kages(:)
    character(kind=c_char) :: cname(64), cnames(32, 32)
    integer(c_int) :: cseg(32)
    integer(c_size_t) :: nk
    integer :: r, k, stat, route, stat2, nr, first_route
    character(len=:), allocatable :: attr, none, kname
    logical :: ok
    allocate (character(len=1) :: kp(0), knames(0))
    call hrtf_open(g, trim(grid_path))
    r = 0
    do
       call hrtf_default_route(r, name, kp, seg, stat)
       if (stat /= HRT_OK) exit
       ok = svc_default_route(int(r, c_size_t), cname, nk, cnames, cseg) == HRT_OK
       ok = ok .and. c_text(cname) == name .and. size(kp) == int(nk) .and. size(seg) == int(nk) - 1
       if (ok) then
          do k = 1, size(kp)
             ok = ok .and. trim(kp(k)) == c_text(cnames(:, k))
          end do
          ok = ok .and. all(seg == cseg(1:size(seg)))
       end if
       call expect(ok, 'hrtf_default_route equals hrt_default_route from C: ' // name)
       call expect(hrtf_route_name(g, r) == name, 'the default grid''s route ' // name // ' has the default name')
       call expect(int(hrt_grid_route_n_keypoints(g%ptr, int(r, c_size_t))) == size(kp), &
            'the default grid''s route ' // name // ' has the default keypoints')
       r = r + 1
    end do
    nr = int(hrt_grid_n_routes(g%ptr))
    block
      type(hrt_error) :: err
      type(c_ptr) :: raw
      character(kind=c_char, len=:), allocatable, target :: cpath
      integer(c_int) :: orc, interp
      integer(c_size_t) :: nraw, nref
      cpath = cstr(grid_path)
      orc = hrt_grid_open(c_loc(cpath), raw, err)
      nraw = 0
      interp = -1
      if (orc == HRT_OK) then
         nraw = hrt_grid_n_routes(raw)
         interp = hrt_grid_interp(raw)
      end if
      nref = hrt_grid_n_routes(g%ptr)
      call expect(orc == HRT_OK .and. nraw == nref .and. interp == HRT_INTERP_STEFFEN, &
           'hrt_grid_open: the grid, with Steffen interpolation')
      call hrt_grid_close(raw)
    end block
    call expect(stat == HRT_E_INVALID .and. r == nr, &
         'hrtf_default_route: as many routes as the default grid, then HRT_E_INVALID')
    call hrtf_default_route(-1, name, kp, seg, stat)
    call expect(stat == HRT_E_INVALID, 'hrtf_default_route(-1): HRT_E_INVALID')
    ! the grid's layout
    allocate (m(hrt_grid_n_masses(g%ptr, 0_c_size_t)))
    m(:) = hrtf_grid_masses(g, 1)
    call expect(size(m) == int(hrt_grid_n_masses(g%ptr, 0_c_size_t)) .and. size(m) > 1, 'hrtf_grid_masses')
    call expect(all(m(2:) > m(:size(m) - 1)), 'track masses ascending')
    attr = hrtf_grid_attribute(g, 'created_by')
    none = hrtf_grid_attribute(g, 'no such')
    call expect(len(attr) > 0 .and. len(none) == 0, 'hrtf_grid_attribute')
    call hrtf_route_of(g, m(1), hrt_grid_z(g%ptr, 0_c_size_t), route, stat)
    first_route = hrt_grid_track_route(g%ptr, 0_c_size_t, 0_c_size_t)
    call expect(stat == HRT_OK .and. route == first_route, &
         'hrtf_route_of the lowest track is its route')
    call hrtf_route_of(g, -1.0_c_double, hrt_grid_z(g%ptr, 0_c_size_t), route, stat2)
    call expect(stat2 == HRT_E_DOMAIN, 'hrtf_route_of a negative mass: HRT_E_DOMAIN')
    ! a star's keypoints: the names of its route, reached in increasing age
    call hrtf_star_new(s, g, m(size(m) / 2), hrt_grid_z(g%ptr, 0_c_size_t))
    call hrtf_star_keypoints(s, knames, kages)
    route = hrt_star_route(s%ptr)
    ok = size(knames) == int(hrt_grid_route_n_keypoints(g%ptr, int(route, c_size_t))) .and. size(knames) >= 2
    do k = 1, size(knames)
       kname = hrtf_string(hrt_grid_keypoint_name(g%ptr, int(route, c_size_t), int(k - 1, c_size_t)))
       ok = ok .and. trim(knames(k)) == kname
    end do
    call expect(ok, 'hrtf_star_keypoints names the keypoints of the star''s route')
    call expect(.not. ieee_is_nan(kages(1)) .and. all(pack(kages(2:), .not. ieee_is_nan(kages(2:))) > kages(1)), &
         'keypoint ages after the first')
    call expect(same(hrt_star_mass(s%ptr), m(size(m) / 2)), 'hrt_star_mass')
    call hrtf_star_free(s)
    call hrtf_close(g)
  end subroutine test_routes_and_keypoints

  !> hrtf_isochrone_with: default options as hrtf_isochrone; chosen phases as C gives them.
  subroutine test_isochrone_options()
    type(hrt_grid_t) :: g
    type(hrt_isochrone_options) :: o
    type(hrt_state), allocatable :: f(:), d(:), c(:)
    real(c_double) :: z, age
    integer(c_size_t) :: n
    integer :: stat, rc, i
    logical :: ok
    call hrtf_open(g, trim(grid_path))
    z = hrt_grid_z_ref(g%ptr)
    age = 2e9_c_double
    o = hrtf_isochrone_options()
    call expect(same(o%max_dlog_l, HRT_ISOCHRONE_MAX_DLOG_L) .and. iand(o%phases, HRT_PHASES_REMNANT) == 0, &
         'default isochrone options: the header''s step, no remnants')
    call hrtf_isochrone_with(g, age, z, o, f, stat)
    call hrtf_isochrone(g, age, z, d, stat)
    call expect(size(f) == size(d) .and. size(f) > 0, 'hrtf_isochrone_with(defaults) as hrtf_isochrone')
    if (size(f) == size(d)) call expect_bytes(transfer(f, [byte]), transfer(d, [byte]), &
         'hrtf_isochrone_with(defaults) equals hrtf_isochrone')
    o%phases = ior(hrtf_phase_bit(HRT_PHASE_MS), HRT_PHASES_REMNANT)
    o%max_dlog_l = 0.05_c_double
    call hrtf_isochrone_with(g, age, z, o, f, stat)
    allocate (c(size(f) + 10))
    rc = svc_isochrone_with(cstr(grid_path), age, z, o, int(size(c), c_size_t), c, n)
    call expect(stat == HRT_OK .and. rc == HRT_OK .and. int(n) == size(f), 'isochrone with options computed')
    if (int(n) == size(f)) call expect_bytes(transfer(f, [byte]), transfer(c(1:n), [byte]), &
         'hrtf_isochrone_with equals hrt_isochrone_with from C')
    ok = size(f) > 0
    do i = 1, size(f)
       ok = ok .and. iand(o%phases, hrtf_phase_bit(int(f(i)%phase))) /= 0
    end do
    call expect(ok, 'every point of the isochrone is of a chosen phase')
    call expect(any(f%phase == HRT_PHASE_MS) .and. any(f%phase == HRT_PHASE_WD), &
         'main sequence and white dwarfs on a 2 Gyr isochrone with remnants asked')
    o%max_dlog_l = -1
    call hrtf_isochrone_with(g, age, z, o, f, stat)
    call expect(stat == HRT_E_DOMAIN .and. size(f) == 0, 'a negative max_dlog_l: HRT_E_DOMAIN')
    call hrtf_close(g)
  end subroutine test_isochrone_options

  !> A population with a spread of metallicity and an exponential SFH: runs split over chunks and
  !> threads, merged, against one C run; draws; summaries of evaluated states.
  subroutine test_population()
    type(hrt_grid_t) :: g
    type(hrt_imf) :: imf, cimf
    type(hrt_pop_spec) :: spec
    type(hrt_pop_hr) :: hr
    type(hrt_pop_summary), allocatable :: fa(:), fb(:), fc(:), cs(:), one(:)
    type(hrt_pop_summary), allocatable :: csum
    real(c_double), allocatable :: zg(:), m(:), z(:), t(:), cm(:), cz(:), ct(:), ages(:)
    type(hrt_state), allocatable :: st(:), stp(:)
    real(c_double) :: epochs(3)
    character(kind=c_char) :: cmsg(256)
    character(len=256) :: msg
    integer(c_size_t) :: n
    integer(c_int64_t) :: nch
    integer :: stat, rc, i
    call hrtf_open(g, trim(grid_path))
    allocate (zg(hrt_grid_n_z(g%ptr)))
    zg(:) = hrtf_z_values(g)
    ! the IMF
    call hrtf_imf_init(imf, HRT_IMF_KROUPA_2001, 0.1_c_double, 60.0_c_double)
    rc = svc_imf_init(cimf, HRT_IMF_KROUPA_2001, 0.1_c_double, 60.0_c_double, 0.0_c_double)
    call expect_bytes(transfer(imf, [byte]), transfer(cimf, [byte]), 'hrtf_imf_init equals hrt_imf_init from C')
    call expect(abs(hrt_imf_cdf(imf, hrt_imf_quantile(imf, 0.3_c_double)) - 0.3_c_double) < 1e-12_c_double, &
         'IMF quantile inverts the CDF (1e-12 absolute)')
    call hrtf_imf_init(cimf, HRT_IMF_POWER_LAW, 1.0_c_double, 0.5_c_double, 2.0_c_double, stat, msg)
    call expect(stat == HRT_E_DOMAIN .and. len_trim(msg) > 0, 'IMF with m_lo > m_hi: HRT_E_DOMAIN: ' // trim(msg))
    ! the population: every input chosen from the grid's own metallicities
    spec = hrtf_pop_spec_default()
    spec%imf = imf
    spec%sfh = hrtf_sfh_span(0.0_c_double, 3e9_c_double, 1.5e9_c_double)
    spec%zdist = hrtf_zdist_spread(zg(1), zg(size(zg)), sqrt(zg(1) * zg(size(zg))), 0.3_c_double)
    spec%n_stars = 20000
    spec%seed = 20261205
    spec%chunk_size = 3000
    call hrtf_pop_check(spec, stat, msg)
    call expect(stat == HRT_OK, 'the population is valid: ' // trim(msg))
    nch = hrt_pop_n_chunks(spec)
    call expect(nch == 7, '20000 stars in chunks of 3000: 7 chunks')
    hr = hrt_pop_hr(3.3_c_double, 5.2_c_double, -4.0_c_double, 6.5_c_double, 38_c_int64_t, 42_c_int64_t)
    epochs = [3e8_c_double, 2e9_c_double, 1.2e10_c_double]
    ! C: one call, one thread
    allocate (cs(size(epochs)))
    rc = svc_pop_run(cstr(grid_path), spec, int(size(epochs), c_size_t), epochs, hr, cs, cmsg)
    call expect(rc == HRT_OK, 'C population run: ' // c_text(cmsg))
    ! Fortran: chunks 0-2 on one thread, 3-6 on two, merged
    call hrtf_pop_summaries(fa, epochs, hr)
    call hrtf_pop_summaries(fb, epochs, hr)
    call hrtf_pop_run(g, spec, fa, 0_c_int64_t, 3_c_int64_t, 1, stat, msg)
    call expect(stat == HRT_OK, 'hrtf_pop_run, chunks 0-2: ' // trim(msg))
    call hrtf_pop_run(g, spec, fb, 3_c_int64_t, nch - 3, 2, stat, msg)
    call expect(stat == HRT_OK, 'hrtf_pop_run, chunks 3-6: ' // trim(msg))
    do i = 1, size(epochs)
       call hrtf_pop_summary_merge(fa(i), fb(i), stat, msg)
       call expect(stat == HRT_OK, 'hrtf_pop_summary_merge: ' // trim(msg))
    end do
    call expect_bytes(transfer(fa, [byte]), transfer(cs, [byte]), &
         'population split over chunks and threads, merged, equals one C run')
    ! Fortran: every chunk, as many threads as OpenMP gives
    call hrtf_pop_summaries(fc, epochs, hr)
    call hrtf_pop_run(g, spec, fc)
    call expect_bytes(transfer(fc, [byte]), transfer(cs, [byte]), 'hrtf_pop_run of every chunk equals C')
    call expect(all(fc%n_drawn == spec%n_stars), 'every summary counts every star drawn')
    call expect(all(fc%n_unborn + fc%n_status(HRT_OK + 1) + fc%n_status(HRT_E_MASS_RANGE + 1) + &
         fc%n_status(HRT_E_Z_RANGE + 1) + fc%n_status(HRT_E_NO_TRACK + 1) + fc%n_status(HRT_E_AGE_RANGE + 1) &
         <= fc%n_drawn), 'counts by status within the stars drawn')
    call expect(fc(1)%n_unborn > fc(2)%n_unborn .and. fc(3)%n_unborn == 0, &
         'stars unborn: fewer later, none after star formation ended')
    call expect(abs(sum(hrtf_pop_sum_value(fc(2)%phase_initial_mass_msun)) - &
         hrtf_pop_sum_value(fc(2)%initial_mass_msun)) <= 1e-9_c_double * hrtf_pop_sum_value(fc(2)%initial_mass_msun), &
         'initial mass by phase adds up to the total (1e-9 relative: one rounding per phase)')
    ! a merge of different epochs is refused, dst unchanged
    one = fc
    call hrtf_pop_summary_merge(one(1), fc(2), stat, msg)
    call expect(stat == HRT_E_INVALID .and. len_trim(msg) > 0, 'merge of two epochs: HRT_E_INVALID: ' // trim(msg))
    call expect_bytes(transfer(one(1), [byte]), transfer(fc(1), [byte]), 'refused merge leaves dst unchanged')
    ! the draws of one chunk
    call hrtf_pop_draw(spec, 2_c_int64_t, m, z, t, stat, msg)
    allocate (cm(4000), cz(4000), ct(4000))
    rc = svc_pop_draw(spec, 2_c_int64_t, 4000_c_size_t, cm, cz, ct, n)
    call expect(stat == HRT_OK .and. rc == HRT_OK .and. size(m) == int(n) .and. size(m) == 3000, 'chunk 2 drawn')
    if (size(m) == int(n)) then
       call expect_bytes(transfer([m, z, t], [byte]), transfer([cm(1:n), cz(1:n), ct(1:n)], [byte]), &
            'hrtf_pop_draw equals hrt_pop_draw from C')
    end if
    call expect(all(m >= 0.1_c_double .and. m <= 60.0_c_double) .and. all(z >= zg(1) .and. z <= zg(size(zg))) &
         .and. all(t >= 0 .and. t <= 3e9_c_double), 'draws within the IMF, metallicity and SFH limits')
    call hrtf_pop_draw(spec, nch, m, z, t, stat, msg)
    call expect(stat == HRT_E_INVALID .and. size(m) == 0, 'a chunk past the last: HRT_E_INVALID: ' // trim(msg))
    ! states evaluated here, summarised here and in C
    call hrtf_pop_draw(spec, 0_c_int64_t, m, z, t, stat)
    ages = 2e9_c_double - t(1:500)
    where (ages < 0) ages = 0
    call hrtf_evaluate(g, m(1:500), ages, z(1:500), st)
    call hrtf_evaluate_parallel(g, m(1:500), ages, z(1:500), stp, 2)
    call expect_bytes(transfer(st, [byte]), transfer(stp, [byte]), 'hrtf_evaluate_parallel equals hrtf_evaluate')
    call hrtf_pop_summaries(one, [2e9_c_double], hr)
    call hrtf_pop_summary_add(one(1), st, stat, msg)
    call expect(stat == HRT_OK, 'hrtf_pop_summary_add: ' // trim(msg))
    allocate (csum)
    rc = svc_pop_add(cstr(grid_path), 2e9_c_double, 500_c_size_t, m, z, ages, hr, csum)
    call expect(rc == HRT_OK, 'C summary of the same states')
    call expect_bytes(transfer(one(1), [byte]), transfer(csum, [byte]), 'hrtf_pop_summary_add equals C')
    call test_parts(g, spec, epochs, hr, cs)
    call hrtf_close(g)
  end subroutine test_population

  !> Parts (hrt_pop_part_*): chunks 4-6 and 0-3 run into two parts, merged, saved and loaded back,
  !> hold the summaries of one C run; a part merged twice is refused.
  subroutine test_parts(g, spec, epochs, hr, cs)
    type(hrt_grid_t), intent(in) :: g
    type(hrt_pop_spec), intent(in) :: spec
    real(c_double), intent(in) :: epochs(:)
    type(hrt_pop_hr), intent(in), target :: hr
    type(hrt_pop_summary), intent(in) :: cs(:)
    type(c_ptr) :: a, b, q
    type(hrt_pop_summary), pointer :: ps(:)
    type(hrt_error) :: err
    integer(c_int8_t), allocatable, target :: buf(:)
    integer(c_size_t) :: len
    integer(c_int64_t) :: f, k
    integer :: rc
    rc = hrt_pop_part_new(spec, int(size(epochs), c_size_t), epochs, c_loc(hr), cstr('fortran'), a, err)
    call expect(rc == HRT_OK, 'hrt_pop_part_new')
    rc = hrt_pop_part_new(spec, int(size(epochs), c_size_t), epochs, c_loc(hr), cstr('fortran'), b, err)
    rc = hrt_pop_part_run(g%ptr, a, 4_c_int64_t, 3_c_int64_t, 2_c_int, err)
    call expect(rc == HRT_OK, 'hrt_pop_part_run, chunks 4-6')
    rc = hrt_pop_part_run(g%ptr, b, 0_c_int64_t, 4_c_int64_t, 1_c_int, err)
    rc = hrt_pop_part_merge(a, b, err)
    call expect(rc == HRT_OK .and. hrt_pop_part_complete(a) == 1 .and. hrt_pop_part_chunks_done(a) == 7 .and. &
         hrt_pop_part_n_ranges(a) == 1, 'parts of chunks 4-6 and 0-3 merge to every chunk, one run of chunks')
    rc = hrt_pop_part_range(a, 0_c_size_t, f, k)
    call expect(rc == HRT_OK .and. f == 0 .and. k == 7, 'its run of chunks is 0-6')
    rc = hrt_pop_part_merge(a, b, err)
    call expect(rc == HRT_E_INVALID, 'a part merged twice is refused (chunks in both)')
    len = 0
    rc = hrt_pop_part_save(a, c_null_ptr, 0_c_size_t, len, err)
    call expect(rc == HRT_E_BUFFER .and. len > 0, 'hrt_pop_part_save tells the size it needs')
    allocate (buf(len))
    rc = hrt_pop_part_save(a, c_loc(buf), len, len, err)
    rc = hrt_pop_part_load(c_loc(buf), len, q, err)
    call expect(rc == HRT_OK .and. hrt_pop_part_n_ages(q) == size(epochs), 'the saved part loads back')
    call c_f_pointer(hrt_pop_part_summary(q, 0_c_size_t), ps, [size(epochs)])
    call expect_bytes(transfer(ps, [byte]), transfer(cs, [byte]), 'the loaded part holds one C run''s summaries')
    call expect(c_associated(hrt_pop_part_spec(q)) .and. c_associated(hrt_pop_part_note(q)), 'spec and note there')
    call hrt_pop_part_free(q)
    call hrt_pop_part_free(b)
    call hrt_pop_part_free(a)
  end subroutine test_parts

  !> Observations taken from the grid itself (a star in the middle of its main sequence, and one in
  !> the middle of the phase after it): fits, posterior draws and forecasts against C.
  subroutine test_fit_and_forecast()
    type(hrt_grid_t) :: g
    type(hrt_star_t) :: s
    type(hrt_fit_model_t) :: model
    type(hrt_fit_model_options) :: o, got
    type(hrt_fit_obs) :: obs(2), bad
    type(hrt_fit_result) :: fres, cres
    type(hrt_fit_sample), allocatable :: fsmp(:)
    type(hrt_fit_sample) :: csmp(300)
    type(hrt_forecast_result) :: ffo, cfo
    type(hrt_forecast_state), allocatable :: fst(:)
    type(hrt_forecast_state) :: cst(4)
    type(hrt_phase_span), allocatable :: spans(:)
    type(hrt_state) :: st
    real(c_double) :: zref, zlo, zhi, feh, dt(4), age
    real(c_double), allocatable :: nodes(:)
    real(c_double), parameter :: masses(2) = [1.2_c_double, 2.0_c_double]
    character(kind=c_char) :: cmsg(256)
    character(len=256) :: msg
    integer :: k, j, stat, rc, ms
    call hrtf_open(g, trim(grid_path))
    zref = hrt_grid_z_ref(g%ptr)
    rc = hrt_grid_z_range(g%ptr, zlo, zhi)
    o = hrtf_fit_model_options()
    o%feh_min = max(log10(zlo / zref), -0.25_c_double)
    o%feh_max = min(log10(zhi / zref), 0.25_c_double)
    call hrtf_fit_model_new(model, g, o, stat, msg)
    call expect(stat == HRT_OK, 'hrtf_fit_model_new: ' // trim(msg))
    rc = hrt_fit_model_get_options(model%ptr, got)
    call expect(same(got%feh_min, o%feh_min) .and. same(got%feh_max, o%feh_max), 'the model keeps its [Fe/H] range')
    allocate (nodes(hrt_fit_model_n_feh(model%ptr)))
    nodes(:) = hrtf_fit_model_feh(model)
    call expect(size(nodes) == int(hrt_fit_model_n_feh(model%ptr)) .and. size(nodes) >= 2, 'hrtf_fit_model_feh')
    do k = 1, 2
       call hrtf_star_new(s, g, masses(k), zref)
       call hrtf_star_phases(s, spans)
       ms = findloc(spans%phase, HRT_PHASE_MS, 1)
       j = ms + k - 1
       age = 0.5_c_double * (spans(j)%phase_start_yr + spans(j)%phase_end_yr)
       call hrtf_star_at(s, age, st)
       call hrtf_star_free(s)
       obs(k) = hrtf_fit_obs()
       obs(k)%teff_k = 10.0_c_double ** st%log_teff_k
       obs(k)%teff_k_sigma = 80.0_c_double
       obs(k)%log_l_lsun = st%log_l_lsun
       obs(k)%log_l_lsun_sigma = 0.05_c_double
       if (k == 1) then
          obs(k)%feh = 0.0_c_double
          obs(k)%feh_sigma = 0.08_c_double
       end if
       call hrtf_fit_star(model, obs(k), fres, 7_c_int64_t + k, 300, fsmp, stat, msg)
       rc = svc_fit(cstr(grid_path), o, obs(k), 7_c_int64_t + k, 300_c_size_t, csmp, cres, cmsg)
       call expect(stat == HRT_OK .and. rc == HRT_OK, 'fit of star ' // achar(48 + k) // ': ' // trim(msg))
       call expect_bytes(transfer(fres, [byte]), transfer(cres, [byte]), 'hrtf_fit_star result equals C')
       call expect_bytes(transfer(fsmp, [byte]), transfer(csmp, [byte]), 'hrtf_fit_star posterior draws equal C''s')
       ! the main-sequence star's phase is the most probable; a star in a short phase after it
       ! may be outweighed by a longer neighbour, but its own phase must carry weight
       if (k == 1) then
          call expect(fres%phase == st%phase, 'the fit finds the phase of the grid''s own star: ' // &
               hrtf_phase_key(int(fres%phase)) // ' for ' // hrtf_phase_key(int(st%phase)))
       else
          call expect(fres%phase_prob(st%phase + 1) > 0, 'the fit gives weight to the phase of the grid''s star: ' &
               // hrtf_phase_key(int(st%phase)))
       end if
       feh = log10(st%z / zref)
       call expect(fres%initial_mass_msun%lo <= masses(k) .and. masses(k) <= fres%initial_mass_msun%hi .or. &
            abs(fres%initial_mass_msun%median - masses(k)) < 0.1_c_double * masses(k), &
            'the fit''s mass interval holds the star''s mass, or its median is within 10 %')
       dt = [0.0_c_double, 1e7_c_double, 1e8_c_double, 1e9_c_double]
       call hrtf_forecast(g, fsmp, ffo, dt, fst, stat, msg)
       rc = svc_forecast(cstr(grid_path), 300_c_size_t, fsmp, 4_c_size_t, dt, cst, cfo, cmsg)
       call expect(stat == HRT_OK .and. rc == HRT_OK, 'forecast: ' // trim(msg))
       call expect_bytes(transfer(ffo, [byte]), transfer(cfo, [byte]), 'hrtf_forecast result equals C')
       call expect_bytes(transfer(fst, [byte]), transfer(cst, [byte]), 'hrtf_forecast states equal C''s')
       call expect(same(ffo%n_samples, 300.0_c_double) .and. ffo%n_events <= HRT_FORECAST_MAX_EVENTS, 'forecast over the draws')
       if (ffo%n_events > 0) call expect(len(hrtf_forecast_event_name(ffo%events(1))) > 0, 'event named')
       ! one exact star, no times
       call hrtf_forecast(g, fsmp(1:1), ffo, stat=stat)
       rc = svc_forecast(cstr(grid_path), 1_c_size_t, fsmp(1:1), 0_c_size_t, dt, cst, cfo, cmsg)
       call expect_bytes(transfer(ffo, [byte]), transfer(cfo, [byte]), 'hrtf_forecast of one star equals C')
    end do
    ! what C refuses, Fortran refuses with the same code and message
    bad = hrtf_fit_obs()
    bad%log_l_lsun = 1.0_c_double
    bad%log_l_lsun_sigma = 0.1_c_double
    call hrtf_fit_star(model, bad, fres, stat=stat, errmsg=msg)
    rc = svc_fit(cstr(grid_path), o, bad, 1_c_int64_t, 0_c_size_t, csmp, cres, cmsg)
    call expect(stat == HRT_E_INVALID .and. rc == stat .and. trim(msg) == c_text(cmsg), &
         'no Teff: HRT_E_INVALID, the message of C: ' // trim(msg))
    call hrtf_forecast(g, [hrt_fit_sample(1.0_c_double, zref, -5.0_c_double, 0, 0, 0, 0)], ffo, stat=stat, errmsg=msg)
    call expect(stat == HRT_E_DOMAIN, 'forecast from a negative age: HRT_E_DOMAIN: ' // trim(msg))
    call hrtf_fit_model_free(model)
    call expect(.not. c_associated(model%ptr), 'hrtf_fit_model_free nulls the handle')
    call hrtf_close(g)
  end subroutine test_fit_and_forecast

end program test_services
