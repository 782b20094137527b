!> Tests of the Fortran module hrtrail against the C library.
!>
!>   test_fortran GRID             layout, ABI guard, phase and remnant codes, evaluation, stars,
!>                                 isochrones, errors, grid upgrade (writes test_fortran_upgraded.h5
!>                                 in the working directory and deletes it)
!>   test_fortran GRID mismatch    run with a stand-in library preloaded that reports ABI 99:
!>                                 the guard must refuse it
!>
!> The reference is the C library called straight from C (c_side.c, linked into
!> this program): every state must be equal bit for bit, and the layout of
!> each derived type equal to the C compiler's offsetof()/sizeof().  The
!> phase and remnant parameters are checked against the library's code lists
!> (hrt_phase_code, hrt_phase_key, ...) and the header's constants
!> (header_values.c), so that a code changed on one side only fails here.
program test_fortran
  use, intrinsic :: iso_c_binding
  use, intrinsic :: ieee_arithmetic, only: ieee_value, ieee_quiet_nan, ieee_positive_inf
  use hrtrail
  implicit none

  interface
     function ref_state_n_fields() bind(C) result(n)
       import :: c_int
       integer(c_int) :: n
     end function ref_state_n_fields
     function ref_state_field(i, name, offset, size) bind(C) result(rc)
       import :: c_int, c_char, c_size_t
       integer(c_int), value :: i
       character(kind=c_char) :: name(24)
       integer(c_size_t), intent(out) :: offset, size
       integer(c_int) :: rc
     end function ref_state_field
     function ref_header_value(which) bind(C) result(v)
       import :: c_int
       integer(c_int), value :: which
       integer(c_int) :: v
     end function ref_header_value
     function ref_sizeof(which) bind(C) result(n)
       import :: c_int, c_size_t
       integer(c_int), value :: which
       integer(c_size_t) :: n
     end function ref_sizeof
     function ref_eval(path, n, m, z, z_all, a, out, msg) bind(C) result(rc)
       import :: c_char, c_size_t, c_double, c_ptr, c_int, hrt_state
       character(kind=c_char), intent(in) :: path(*)
       integer(c_size_t), value :: n
       real(c_double), intent(in) :: m(*), a(*)
       type(c_ptr), value :: z
       real(c_double), value :: z_all
       type(hrt_state), intent(inout) :: out(*)
       character(kind=c_char) :: msg(256)
       integer(c_int) :: rc
     end function ref_eval
     function ref_star(path, mass, z, n_ages, ages, at, cap_track, track, n_track, cap_spans, spans, &
          n_spans) bind(C) result(rc)
       import :: c_char, c_size_t, c_double, c_int, hrt_state, hrt_phase_span
       character(kind=c_char), intent(in) :: path(*)
       real(c_double), value :: mass, z
       integer(c_size_t), value :: n_ages, cap_track, cap_spans
       real(c_double), intent(in) :: ages(*)
       type(hrt_state), intent(inout) :: at(*), track(*)
       integer(c_size_t), intent(out) :: n_track, n_spans
       type(hrt_phase_span), intent(inout) :: spans(*)
       integer(c_int) :: rc
     end function ref_star
     function ref_isochrone(path, age, z, cap, out, n) bind(C) result(rc)
       import :: c_char, c_size_t, c_double, c_int, hrt_state
       character(kind=c_char), intent(in) :: path(*)
       real(c_double), value :: age, z
       integer(c_size_t), value :: cap
       type(hrt_state), intent(inout) :: out(*)
       integer(c_size_t), intent(out) :: n
       integer(c_int) :: rc
     end function ref_isochrone
  end interface

  integer :: failures = 0, checks = 0
  character(len=4096) :: grid_path, mode
  real(c_double) :: nan, inf

  nan = ieee_value(0.0_c_double, ieee_quiet_nan)
  inf = ieee_value(0.0_c_double, ieee_positive_inf)
  if (command_argument_count() < 1) then
     write (*, '(a)') 'usage: test_fortran GRID [mismatch]'
     error stop 2
  end if
  call get_command_argument(1, grid_path)
  mode = ''
  if (command_argument_count() >= 2) call get_command_argument(2, mode)

  if (trim(mode) == 'mismatch') then
     call test_guard_refuses()
  else
     call test_layout()
     call test_abi()
     call test_codes()
     call test_eval()
     call test_magnitudes()
     call test_remap()
     call test_extras()
     call test_stars()
     call test_isochrones()
     call test_errors()
     call test_upgrade()
  end if
  write (*, '(a,i0,a,i0,a)') 'fortran binding: ', checks, ' checks, ', failures, ' failures'
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

  !> Name of the first field where a and b differ bit for bit ('' if none).
  function first_difference(a, b) result(field)
    type(hrt_state), intent(in) :: a, b
    character(len=:), allocatable :: field
    integer :: k
    field = ''
    if (a%struct_size /= b%struct_size) field = 'struct_size'
    if (a%status /= b%status) field = 'status'
    if (a%phase /= b%phase) field = 'phase'
    if (a%route /= b%route) field = 'route'
    if (a%remnant /= b%remnant) field = 'remnant'
    if (a%flags /= b%flags) field = 'flags'
    if (.not. same(a%initial_mass_msun, b%initial_mass_msun)) field = 'initial_mass_msun'
    if (.not. same(a%z, b%z)) field = 'z'
    if (.not. same(a%age_yr, b%age_yr)) field = 'age_yr'
    if (.not. same(a%log_l_lsun, b%log_l_lsun)) field = 'log_l_lsun'
    if (.not. same(a%log_teff_k, b%log_teff_k)) field = 'log_teff_k'
    if (.not. same(a%log_r_rsun, b%log_r_rsun)) field = 'log_r_rsun'
    if (.not. same(a%log_g_cgs, b%log_g_cgs)) field = 'log_g_cgs'
    if (.not. same(a%mass_msun, b%mass_msun)) field = 'mass_msun'
    if (.not. same(a%he_core_mass_msun, b%he_core_mass_msun)) field = 'he_core_mass_msun'
    if (.not. same(a%co_core_mass_msun, b%co_core_mass_msun)) field = 'co_core_mass_msun'
    if (.not. same(a%eep, b%eep)) field = 'eep'
    if (.not. same(a%phase_fraction, b%phase_fraction)) field = 'phase_fraction'
    if (.not. same(a%phase_start_yr, b%phase_start_yr)) field = 'phase_start_yr'
    if (.not. same(a%phase_end_yr, b%phase_end_yr)) field = 'phase_end_yr'
    if (.not. same(a%remnant_mass_msun, b%remnant_mass_msun)) field = 'remnant_mass_msun'
    do k = 1, 7
       if (.not. same(a%reserved(k), b%reserved(k))) field = 'reserved'
    end do
  end function first_difference

  !> Bit-for-bit equality of two doubles (NaN payloads and signed zeros included).
  logical function same(x, y)
    real(c_double), intent(in) :: x, y
    same = transfer(x, 0_c_int64_t) == transfer(y, 0_c_int64_t)
  end function same

  subroutine expect_same_states(f, c, what)
    type(hrt_state), intent(in) :: f(:), c(:)
    character(len=*), intent(in) :: what
    integer :: i, bad, first
    character(len=:), allocatable :: field, first_field
    bad = 0
    first = 0
    first_field = ''
    if (size(f) /= size(c)) then
       call expect(.false., what // ': different numbers of states')
       return
    end if
    do i = 1, size(f)
       field = first_difference(f(i), c(i))
       if (len(field) > 0) then
          bad = bad + 1
          if (first == 0) then
             first = i
             first_field = field
          end if
       end if
    end do
    if (bad > 0) write (*, '(a,i0,a,i0,a,a)') '  ', bad, ' states differ; first ', first, ' in ', first_field
    call expect(bad == 0, what)
  end subroutine expect_same_states

  integer(c_intptr_t) function addr(p)
    type(c_ptr), intent(in) :: p
    addr = transfer(p, 0_c_intptr_t)
  end function addr

  subroutine test_layout()
    type(hrt_state), target :: s
    type(hrt_error) :: e
    type(hrt_phase_span) :: sp
    character(len=24) :: names(22)
    integer(c_intptr_t) :: offs(22)
    integer(c_size_t) :: sizes(22), off, sz
    character(kind=c_char) :: cname(24)
    integer :: i
    integer(c_intptr_t) :: base
    base = addr(c_loc(s))
    names = [character(len=24) :: 'struct_size', 'status', 'phase', 'route', 'remnant', 'flags', &
         'initial_mass_msun', 'z', 'age_yr', 'log_l_lsun', 'log_teff_k', 'log_r_rsun', 'log_g_cgs', &
         'mass_msun', 'he_core_mass_msun', 'co_core_mass_msun', 'eep', 'phase_fraction', 'phase_start_yr', 'phase_end_yr', &
         'remnant_mass_msun', 'reserved']
    offs = [addr(c_loc(s%struct_size)), addr(c_loc(s%status)), addr(c_loc(s%phase)), &
         addr(c_loc(s%route)), addr(c_loc(s%remnant)), addr(c_loc(s%flags)), &
         addr(c_loc(s%initial_mass_msun)), addr(c_loc(s%z)), addr(c_loc(s%age_yr)), &
         addr(c_loc(s%log_l_lsun)), addr(c_loc(s%log_teff_k)), addr(c_loc(s%log_r_rsun)), &
         addr(c_loc(s%log_g_cgs)), addr(c_loc(s%mass_msun)), addr(c_loc(s%he_core_mass_msun)), &
         addr(c_loc(s%co_core_mass_msun)), addr(c_loc(s%eep)), addr(c_loc(s%phase_fraction)), &
         addr(c_loc(s%phase_start_yr)), addr(c_loc(s%phase_end_yr)), &
         addr(c_loc(s%remnant_mass_msun)), addr(c_loc(s%reserved))] - base
    sizes = [c_sizeof(s%struct_size), c_sizeof(s%status), c_sizeof(s%phase), c_sizeof(s%route), &
         c_sizeof(s%remnant), c_sizeof(s%flags), c_sizeof(s%initial_mass_msun), c_sizeof(s%z), &
         c_sizeof(s%age_yr), c_sizeof(s%log_l_lsun), c_sizeof(s%log_teff_k), c_sizeof(s%log_r_rsun), &
         c_sizeof(s%log_g_cgs), c_sizeof(s%mass_msun), c_sizeof(s%he_core_mass_msun), &
         c_sizeof(s%co_core_mass_msun), c_sizeof(s%eep), c_sizeof(s%phase_fraction), &
         c_sizeof(s%phase_start_yr), c_sizeof(s%phase_end_yr), c_sizeof(s%remnant_mass_msun), &
         c_sizeof(s%reserved)]
    call expect(ref_state_n_fields() == size(names), 'hrt_state has as many fields in Fortran as in C')
    do i = 1, min(size(names), int(ref_state_n_fields()))
       if (ref_state_field(int(i - 1, c_int), cname, off, sz) /= 0) cycle
       call expect(c_text(cname) == trim(names(i)), 'field ' // trim(names(i)) // ' in C order')
       call expect(offs(i) == int(off, c_intptr_t), 'offset of hrt_state%' // trim(names(i)))
       call expect(sizes(i) == sz, 'size of hrt_state%' // trim(names(i)))
    end do
    call expect(c_sizeof(s) == ref_sizeof(0_c_int), 'sizeof(hrt_state)')
    call expect(c_sizeof(e) == ref_sizeof(1_c_int), 'sizeof(hrt_error)')
    call expect(c_sizeof(sp) == ref_sizeof(2_c_int), 'sizeof(hrt_phase_span)')
    call expect(c_sizeof(s) == hrt_state_size(), 'sizeof(hrt_state) as the library reports')
  end subroutine test_layout

  subroutine test_abi()
    integer :: stat
    character(len=256) :: msg
    character(len=40) :: want
    call hrtf_check_abi(stat, msg)
    call expect(stat == HRT_OK .and. len_trim(msg) == 0, 'ABI guard accepts the library it was built against')
    call expect(hrt_abi_version() == HRTF_ABI_VERSION, 'module ABI number equals the library''s')
    call expect(HRTF_ABI_VERSION == ref_header_value(0_c_int), 'module ABI number equals the header''s HRT_ABI_VERSION')
    call hrtf_check_abi_values(99, 200_c_size_t, stat, msg)
    call expect(stat == HRTF_E_ABI .and. index(msg, 'reports ABI 99') > 0, 'ABI guard refuses ABI 99: ' // trim(msg))
    call hrtf_check_abi_values(HRTF_ABI_VERSION, 208_c_size_t, stat, msg)
    call expect(stat == HRTF_E_ABI .and. index(msg, '= 208 bytes') > 0, 'ABI guard refuses a 208-byte hrt_state')
    call hrtf_check_abi_values(HRTF_ABI_VERSION - 1, hrt_state_size(), stat, msg)
    write (want, '(a,i0,a)') 'reports ABI ', HRTF_ABI_VERSION - 1, ' '
    call expect(stat == HRTF_E_ABI .and. index(msg, want(1:len_trim(want) + 1)) > 0, &
         'ABI guard refuses the previous ABI with an hrt_state of the same size: ' // trim(msg))
  end subroutine test_abi

  subroutine test_guard_refuses()
    integer :: stat
    character(len=256) :: msg
    type(hrt_grid_t) :: g
    call hrtf_check_abi(stat, msg)
    call expect(stat == HRTF_E_ABI .and. index(msg, 'reports ABI 99') > 0, &
         'preloaded library of ABI 99 refused: ' // trim(msg))
    call hrtf_open(g, trim(grid_path), stat=stat, errmsg=msg)
    call expect(stat == HRTF_E_ABI .and. .not. c_associated(g%ptr), 'hrtf_open refuses to open with ABI 99')
  end subroutine test_guard_refuses

  !> Every HRT_PHASE_* and HRT_REMNANT_* parameter against the library's lists: the i-th
  !> parameter (in the order of HRT_PHASE_LIST) is hrt_phase_code(i) and has the key its
  !> name says; the counts and slot sizes are the library's and the header's.
  subroutine test_codes()
    integer(c_int), parameter :: phases(16) = [HRT_PHASE_UNKNOWN, HRT_PHASE_PRE_MS, HRT_PHASE_MS, &
         HRT_PHASE_SUBGIANT, HRT_PHASE_RGB, HRT_PHASE_POST_RGB, HRT_PHASE_CHEB, HRT_PHASE_EAGB, &
         HRT_PHASE_TPAGB, HRT_PHASE_POST_AGB, HRT_PHASE_BSG, HRT_PHASE_RSG, HRT_PHASE_WR, HRT_PHASE_WD, &
         HRT_PHASE_NS, HRT_PHASE_BH]
    character(len=*), parameter :: phase_keys(16) = [character(len=8) :: 'unknown', 'pre_ms', 'ms', &
         'subgiant', 'rgb', 'post_rgb', 'cheb', 'eagb', 'tpagb', 'post_agb', 'bsg', 'rsg', 'wr', 'wd', 'ns', 'bh']
    integer(c_int), parameter :: remnants(6) = [HRT_REMNANT_NONE, HRT_REMNANT_HE_WD, HRT_REMNANT_CO_WD, &
         HRT_REMNANT_ONE_WD, HRT_REMNANT_NS, HRT_REMNANT_BH]
    character(len=*), parameter :: remnant_keys(6) = [character(len=6) :: 'none', 'he_wd', 'co_wd', 'one_wd', &
         'ns', 'bh']
    integer :: i
    integer(c_int) :: last, beyond
    character(len=:), allocatable :: key, fkey
    call expect(HRT_PHASE_N == size(phases), 'every HRT_PHASE_* parameter is in the table (HRT_PHASE_N)')
    call expect(HRT_PHASE_N == ref_header_value(1_c_int), 'HRT_PHASE_N equals the header''s')
    call expect(HRT_PHASE_SLOTS == ref_header_value(2_c_int), 'HRT_PHASE_SLOTS equals the header''s')
    last = hrt_phase_code(int(HRT_PHASE_N - 1, c_size_t))
    beyond = hrt_phase_code(int(HRT_PHASE_N, c_size_t))
    call expect(last >= 0 .and. beyond == -1, 'the library lists HRT_PHASE_N phases')
    do i = 1, size(phases)
       key = hrtf_string(hrt_phase_key(phases(i)))
       fkey = hrtf_phase_key(int(phases(i)))
       call expect(hrt_phase_code(int(i - 1, c_size_t)) == phases(i), &
            'HRT_PHASE_* parameter ' // trim(phase_keys(i)) // ' is the library''s code in list order')
       call expect(key == trim(phase_keys(i)) .and. fkey == key, &
            'phase code of ' // trim(phase_keys(i)) // ' has that key in the library, not ' // key)
       call expect(phases(i) >= 0 .and. phases(i) < HRT_PHASE_SLOTS, &
            'phase code of ' // trim(phase_keys(i)) // ' below HRT_PHASE_SLOTS')
       call expect(count(phases == phases(i)) == 1, 'phase code of ' // trim(phase_keys(i)) // ' unique')
    end do
    call expect(HRT_REMNANT_N == size(remnants), 'every HRT_REMNANT_* parameter is in the table (HRT_REMNANT_N)')
    call expect(HRT_REMNANT_N == ref_header_value(3_c_int), 'HRT_REMNANT_N equals the header''s')
    call expect(HRT_REMNANT_SLOTS == ref_header_value(4_c_int), 'HRT_REMNANT_SLOTS equals the header''s')
    last = hrt_remnant_code(int(HRT_REMNANT_N - 1, c_size_t))
    beyond = hrt_remnant_code(int(HRT_REMNANT_N, c_size_t))
    call expect(last >= 0 .and. beyond == -1, 'the library lists HRT_REMNANT_N remnant kinds')
    do i = 1, size(remnants)
       key = hrtf_string(hrt_remnant_key(remnants(i)))
       call expect(hrt_remnant_code(int(i - 1, c_size_t)) == remnants(i), &
            'HRT_REMNANT_* parameter ' // trim(remnant_keys(i)) // ' is the library''s code in list order')
       call expect(key == trim(remnant_keys(i)), &
            'remnant code of ' // trim(remnant_keys(i)) // ' has that key in the library, not ' // key)
       call expect(remnants(i) >= 0 .and. remnants(i) < HRT_REMNANT_SLOTS, &
            'remnant code of ' // trim(remnant_keys(i)) // ' below HRT_REMNANT_SLOTS')
       call expect(count(remnants == remnants(i)) == 1, 'remnant code of ' // trim(remnant_keys(i)) // ' unique')
    end do
  end subroutine test_codes

  !> Deterministic stars across the grid and beyond it, with edge cases.
  subroutine draw_stars(g, n, m, z, a)
    type(hrt_grid_t), intent(in) :: g
    integer, intent(in) :: n
    real(c_double), allocatable, intent(out) :: m(:), z(:), a(:)
    real(c_double), allocatable :: zg(:)
    integer(c_int64_t) :: seed
    integer :: i, k
    real(c_double) :: u(3)
    allocate (zg(hrt_grid_n_z(g%ptr)))
    zg(:) = hrtf_z_values(g)
    allocate (m(n + 10), z(n + 10), a(n + 10))
    seed = 88172645463325252_c_int64_t
    do i = 1, n
       do k = 1, 3
          seed = ieor(seed, ishft(seed, 13))
          seed = ieor(seed, ishft(seed, -7))
          seed = ieor(seed, ishft(seed, 17))
          u(k) = real(ishft(seed, -11), c_double) / 9007199254740992.0_c_double
       end do
       m(i) = 0.08_c_double * (150.0_c_double / 0.08_c_double) ** u(1)
       if (mod(i, 2) == 0) then
          z(i) = zg(1 + mod(ishft(i, -1), size(zg)))
       else
          z(i) = zg(1) * (zg(size(zg)) / zg(1)) ** u(2)
       end if
       a(i) = 1e4_c_double * (3e10_c_double / 1e4_c_double) ** u(3)
    end do
    m(n + 1:) = [nan, 1.0_c_double, 1.0_c_double, 1.0_c_double, -1.0_c_double, 500.0_c_double, &
         1.0_c_double, 1.0_c_double, 1.0_c_double, 0.0_c_double]
    z(n + 1:) = [0.014_c_double, nan, 0.014_c_double, 0.014_c_double, 0.014_c_double, 0.014_c_double, &
         1.0_c_double, 0.014_c_double, 0.014_c_double, 0.014_c_double]
    a(n + 1:) = [1e9_c_double, 1e9_c_double, nan, -5.0_c_double, 1e9_c_double, 1e9_c_double, &
         1e9_c_double, 0.0_c_double, inf, 1e9_c_double]
  end subroutine draw_stars

  !> hrt_magnitudes and hrt_bc_v through the module's interfaces: the definitions of their header
  !> (M_bol = 4.74 - 2.5 log L, IAU 2015 B2; M_V = M_bol - BC_V; m_V = M_V + 5 log10(d/10 pc) + A_V)
  !> hold star by star, so an argument passed in the wrong place fails here.
  subroutine test_magnitudes()
    type(hrt_grid_t) :: g
    real(c_double), allocatable :: m(:), z(:), a(:)
    type(hrt_state), allocatable :: f(:)
    real(c_double), allocatable, target :: mb(:), bc(:), mva(:), mv(:)
    integer(c_int32_t), allocatable, target :: fl(:)
    type(hrt_error) :: err
    integer :: stat, rc, i, bad, lit
    character(len=96) :: msg
    real(c_double), parameter :: d = 850.0_c_double, av = 0.4_c_double
    call hrtf_open(g, trim(grid_path), stat=stat)
    if (stat /= HRT_OK) return
    call draw_stars(g, 2000, m, z, a)
    call hrtf_evaluate(g, m, a, z, f, stat)
    allocate (mb(size(f)), bc(size(f)), mva(size(f)), mv(size(f)), fl(size(f)))
    rc = hrt_magnitudes(int(size(f), c_size_t), f, d, av, c_loc(mb), c_loc(bc), c_loc(mva), c_loc(mv), c_loc(fl), err)
    call expect(rc == HRT_OK .and. err%code == HRT_OK, 'hrt_magnitudes from Fortran returns HRT_OK')
    bad = 0
    lit = 0
    do i = 1, size(f)
       if (f(i)%status /= HRT_OK .or. iand(f(i)%flags, HRT_FLAG_DARK + HRT_FLAG_NOT_MODELLED) /= 0) cycle
       lit = lit + 1
       if (abs(mb(i) - (4.74_c_double - 2.5_c_double * f(i)%log_l_lsun)) > 1e-4_c_double) bad = bad + 1
       if (abs(bc(i) - hrt_bc_v(f(i)%log_teff_k)) > 0.0_c_double) bad = bad + 1
       if (abs(mva(i) - (mb(i) - bc(i))) > 1e-12_c_double) bad = bad + 1
       if (abs(mv(i) - (mva(i) + 5.0_c_double * log10(d / 10.0_c_double) + av)) > 1e-9_c_double) bad = bad + 1
       if (iand(fl(i), not(HRT_FLAG_BEYOND_LAW)) /= iand(f(i)%flags, not(HRT_FLAG_BEYOND_LAW))) bad = bad + 1
    end do
    write (msg, '(i0,a,i0,a)') bad, ' breaches in ', lit, ' luminous stars'
    call expect(lit > 500 .and. bad == 0, 'hrt_magnitudes from Fortran follows its definitions: ' // trim(msg))
    rc = hrt_magnitudes(1_c_size_t, f, -1.0_c_double, 0.0_c_double, c_null_ptr, c_null_ptr, c_null_ptr, c_loc(mv), &
         c_null_ptr, err)
    call expect(rc == HRT_E_DOMAIN .and. err%code == HRT_E_DOMAIN, 'hrt_magnitudes refuses a negative distance')
    call hrtf_close(g)
  end subroutine test_magnitudes

  !> The grid's extra quantities through the module: names, and hrt_extra_at equal to hrt_state_extra of the
  !> state hrtf_evaluate gives (the same interpolation), and gyration_k2 of a radiative star that of an n = 3
  !> polytrope (0.0754, tracks/MODEL.md; from memory, checked by tests/test_structure.c).
  subroutine test_extras()
    type(hrt_grid_t) :: g
    type(hrt_error) :: err
    type(hrt_state), target :: st
    type(hrt_state), allocatable :: f(:)
    integer(c_size_t), target :: idx(2)
    real(c_double) :: v(2), w(2)
    character(len=256) :: msg
    integer :: stat, rc
    call hrtf_open(g, trim(grid_path), stat=stat, errmsg=msg)
    call expect(stat == HRT_OK, 'open ' // trim(grid_path) // ': ' // trim(msg))
    if (stat /= HRT_OK) return
    call expect(hrt_grid_extra_count(g%ptr) >= 2, 'the default grid has extra quantities')
    idx(1) = int(hrt_grid_extra_index(g%ptr, 'gyration_k2' // c_null_char), c_size_t)
    idx(2) = int(hrt_grid_extra_index(g%ptr, 'lambda_ce' // c_null_char), c_size_t)
    call expect(hrtf_grid_extra_name(g, int(idx(1))) == 'gyration_k2', 'hrtf_grid_extra_name')
    rc = hrt_extra_at(g%ptr, 5.0_c_double, 0.014_c_double, 3.0e7_c_double, 2_c_size_t, c_loc(idx), v, c_loc(st), err)
    call expect(rc == HRT_OK, 'hrt_extra_at from Fortran')
    call expect(abs(v(1) / 0.0754_c_double - 1) < 0.002_c_double, 'k2 of a 5 Msun main-sequence star')
    call hrtf_evaluate(g, [5.0_c_double], [3.0e7_c_double], 0.014_c_double, f, stat, msg)
    rc = hrt_state_extra(g%ptr, f(1), 2_c_size_t, c_loc(idx), w, err)
    call expect(rc == HRT_OK .and. maxval(abs(v - w)) <= 0.0_c_double, &
         'hrt_state_extra of hrtf_evaluate''s state equals hrt_extra_at')
    idx(1) = 99
    rc = hrt_state_extra(g%ptr, f(1), 1_c_size_t, c_loc(idx), w, err)
    call expect(rc == HRT_E_INVALID, 'an index out of range is refused')
    call hrtf_close(g)
  end subroutine test_extras

  subroutine test_eval()
    type(hrt_grid_t) :: g
    real(c_double), allocatable, target :: m(:), z(:), a(:)
    type(hrt_state), allocatable :: f(:), c(:)
    character(kind=c_char) :: cmsg(256)
    character(len=256) :: msg
    integer :: stat, rc, n
    call hrtf_open(g, trim(grid_path), stat=stat, errmsg=msg)
    call expect(stat == HRT_OK, 'open ' // trim(grid_path) // ': ' // trim(msg))
    if (stat /= HRT_OK) return
    call draw_stars(g, 20000, m, z, a)
    n = size(m)
    allocate (c(n))
    ! one metallicity per star
    call hrtf_evaluate(g, m, a, z, f, stat, msg)
    rc = ref_eval(cstr(grid_path), int(n, c_size_t), m, c_loc(z), 0.0_c_double, a, c, cmsg)
    call expect_same_states(f, c, 'hrtf_evaluate (z per star) equals hrt_eval from C')
    call expect(stat == rc, 'hrtf_evaluate stat equals the C return code')
    call expect(trim(msg) == c_text(cmsg), 'hrtf_evaluate errmsg equals the C message: ' // trim(msg))
    call expect(count(f%status /= HRT_OK) > 5 .and. count(f%phase == HRT_PHASE_PRE_MS) > 10 .and. &
         count(iand(f%flags, HRT_FLAG_REMNANT) /= 0) > 100, 'the stars cover failures, pre-MS and remnants')
    ! one metallicity for all
    call hrtf_evaluate(g, m, a, z(1), f, stat, msg)
    rc = ref_eval(cstr(grid_path), int(n, c_size_t), m, c_null_ptr, z(1), a, c, cmsg)
    call expect_same_states(f, c, 'hrtf_evaluate (one z) equals hrt_eval from C')
    call expect(stat == rc, 'hrtf_evaluate (one z) stat equals the C return code')
    ! non-contiguous input sections are copied in, not misread
    call hrtf_evaluate(g, m(1:n:2), a(1:n:2), z(1:n:2), f, stat, msg)
    deallocate (c)
    allocate (c(size(f)))
    block
      real(c_double), allocatable, target :: m2(:), a2(:), z2(:)
      m2 = m(1:n:2)
      a2 = a(1:n:2)
      z2 = z(1:n:2)
      rc = ref_eval(cstr(grid_path), int(size(m2), c_size_t), m2, c_loc(z2), 0.0_c_double, a2, c, cmsg)
    end block
    call expect_same_states(f, c, 'hrtf_evaluate on strided sections equals hrt_eval on copies')
    call hrtf_close(g)
  end subroutine test_eval

  subroutine test_stars()
    type(hrt_grid_t) :: g
    type(hrt_star_t) :: s
    real(c_double), parameter :: masses(5) = [1.0_c_double, 2.3_c_double, 0.7_c_double, 12.0_c_double, &
         45.0_c_double]
    real(c_double), parameter :: zs(5) = [0.014_c_double, 0.004_c_double, 0.0001_c_double, 0.03_c_double, &
         0.008_c_double]
    real(c_double) :: ages(203)
    type(hrt_state) :: fat(203), cat(203)
    type(hrt_state), allocatable :: ctrack(:)
    type(hrt_state), allocatable :: ftrack(:)
    type(hrt_phase_span), allocatable :: fspans(:)
    type(hrt_phase_span) :: cspans(64)
    integer(c_size_t) :: nt, ns
    integer :: i, k, stat, rc, remnant
    real(c_double) :: rmass
    logical :: ok
    allocate (ctrack(2000))
    call hrtf_open(g, trim(grid_path))
    do i = 1, 201
       ages(i) = 10.0_c_double ** (4.0_c_double + 6.5_c_double * real(i - 1, c_double) / 200.0_c_double)
    end do
    ages(202:203) = [0.0_c_double, 1e13_c_double]
    do k = 1, size(masses)
       call hrtf_star_new(s, g, masses(k), zs(k), stat)
       call expect(stat == HRT_OK, 'hrtf_star_new')
       do i = 1, size(ages)
          call hrtf_star_at(s, ages(i), fat(i), stat)
       end do
       call hrtf_star_track(s, ftrack, stat)
       call hrtf_star_phases(s, fspans, stat)
       rc = ref_star(cstr(grid_path), masses(k), zs(k), int(size(ages), c_size_t), ages, cat, &
            int(size(ctrack), c_size_t), ctrack, nt, int(size(cspans), c_size_t), cspans, ns)
       call expect(rc == HRT_OK, 'C star')
       call expect_same_states(fat, cat, 'hrtf_star_at equals hrt_star_at from C')
       call expect(size(ftrack) == int(nt), 'track length')
       if (size(ftrack) == int(nt)) call expect_same_states(ftrack, ctrack(1:nt), 'hrtf_star_track equals C')
       ok = size(fspans) == int(ns)
       if (ok) then
          do i = 1, size(fspans)
             ok = ok .and. fspans(i)%phase == cspans(i)%phase .and. same(fspans(i)%phase_start_yr, cspans(i)%phase_start_yr) &
                  .and. same(fspans(i)%phase_end_yr, cspans(i)%phase_end_yr)
          end do
       end if
       call expect(ok, 'hrtf_star_phases equals hrt_star_phases from C')
       call hrtf_star_remnant(s, remnant, rmass)
       call expect(remnant == fat(1)%remnant .and. same(rmass, fat(1)%remnant_mass_msun), 'remnant as in the state')
       call expect(hrtf_star_end_age(s) > 0.0_c_double, 'end age')
       call hrtf_star_free(s)
       call expect(.not. c_associated(s%ptr), 'hrtf_star_free nulls the handle')
    end do
    call hrtf_close(g)
  end subroutine test_stars

  !> hrt_remap and hrt_step through the module's interfaces: an unchanged star stays on its own
  !> track (bit for bit with hrt_eval), a changed one gets the new mass, a white dwarf is refused.
  subroutine test_remap()
    type(hrt_grid_t) :: g
    type(hrt_error) :: err
    type(hrt_state) :: s(1), r(1), nx(1), ref(1), wd(1)
    real(c_double) :: m(1), a(1), dtn
    integer(c_int) :: rc
    call hrtf_open(g, trim(grid_path))
    m = 2.0_c_double
    a = 3e8_c_double
    rc = hrt_eval(g%ptr, 1_c_size_t, m, c_null_ptr, 0.014_c_double, a, s, err)
    call expect(rc == HRT_OK .and. s(1)%phase == HRT_PHASE_MS, 'hrt_eval of a 2 Msun main-sequence star')
    rc = hrt_remap(g%ptr, s(1), s(1)%mass_msun, r(1), err)
    call expect(rc == HRT_OK, 'hrt_remap to the same mass from Fortran')
    call expect_same_states(r, s, 'hrt_remap to the same mass returns the star''s own state')
    rc = hrt_remap(g%ptr, s(1), 1.2_c_double * s(1)%mass_msun, r(1), err)
    call expect(rc == HRT_OK .and. abs(r(1)%mass_msun - 1.2_c_double * s(1)%mass_msun) < 1e-9_c_double .and. &
         r(1)%initial_mass_msun > s(1)%initial_mass_msun, 'hrt_remap of a gain: new mass, heavier initial mass')
    rc = hrt_step(g%ptr, s(1), 1e6_c_double, 0.0_c_double, nx(1), dtn, err)
    a = 3e8_c_double + 1e6_c_double
    rc = max(rc, hrt_eval(g%ptr, 1_c_size_t, m, c_null_ptr, 0.014_c_double, a, ref, err))
    call expect(rc == HRT_OK .and. dtn > 0.0_c_double, 'hrt_step without a mass change from Fortran')
    call expect_same_states(nx, ref, 'hrt_step without a mass change follows the track')
    rc = hrt_step(g%ptr, s(1), 1e6_c_double, 1e-8_c_double, nx(1), dtn, err)
    call expect(rc == HRT_OK .and. abs(nx(1)%mass_msun - ref(1)%mass_msun - 1e-2_c_double) < 1e-9_c_double, &
         'hrt_step with a gain adds it to the track''s mass')
    m = 1.0_c_double
    a = 2e10_c_double
    rc = hrt_eval(g%ptr, 1_c_size_t, m, c_null_ptr, 0.014_c_double, a, wd, err)
    rc = hrt_remap(g%ptr, wd(1), 0.7_c_double, r(1), err)
    call expect(rc == HRT_E_NO_EQUIVALENT .and. err%code == HRT_E_NO_EQUIVALENT, &
         'hrt_remap refuses a white dwarf with HRT_E_NO_EQUIVALENT')
    call hrtf_close(g)
  end subroutine test_remap

  subroutine test_isochrones()
    type(hrt_grid_t) :: g
    type(hrt_state), allocatable :: f(:)
    type(hrt_state), allocatable :: c(:)
    real(c_double), parameter :: ages(3) = [1e9_c_double, 1.2e7_c_double, 1.1e10_c_double]
    real(c_double), parameter :: zs(3) = [0.014_c_double, 0.004_c_double, 0.0003_c_double]
    integer(c_size_t) :: n
    integer :: k, stat, rc
    allocate (c(20000))
    call hrtf_open(g, trim(grid_path))
    do k = 1, 3
       call hrtf_isochrone(g, ages(k), zs(k), f, stat)
       rc = ref_isochrone(cstr(grid_path), ages(k), zs(k), int(size(c), c_size_t), c, n)
       call expect(stat == HRT_OK .and. rc == HRT_OK .and. size(f) > 100, 'isochrone computed')
       if (int(n) == size(f)) then
          call expect_same_states(f, c(1:n), 'hrtf_isochrone equals hrt_isochrone from C')
       else
          call expect(.false., 'isochrone sizes differ')
       end if
    end do
    call hrtf_close(g)
  end subroutine test_isochrones

  subroutine test_errors()
    type(hrt_grid_t) :: g
    type(hrt_star_t) :: s
    type(hrt_state), allocatable :: f(:)
    type(hrt_state) :: one
    integer :: stat
    character(len=256) :: msg
    real(c_double) :: lo, hi
    call hrtf_open(g, '/nonexistent/grid.h5', stat=stat, errmsg=msg)
    call expect(stat == HRT_E_IO .and. index(msg, '/nonexistent/grid.h5') > 0, &
         'missing grid file: HRT_E_IO naming the path: ' // trim(msg))
    call expect(.not. c_associated(g%ptr), 'failed open leaves a null handle')
    call hrtf_open(g, trim(grid_path), interp=17, stat=stat)
    call expect(stat == HRT_E_INVALID, 'unknown interpolation type: HRT_E_INVALID')
    call hrtf_open(g, trim(grid_path), interp=HRT_INTERP_AKIMA)
    call hrtf_evaluate(g, [1.0_c_double, 500.0_c_double], [1e9_c_double, 1e9_c_double], 0.014_c_double, &
         f, stat, msg)
    call expect(stat == HRT_E_MASS_RANGE .and. f(1)%status == HRT_OK .and. f(2)%status == HRT_E_MASS_RANGE &
         .and. index(msg, 'star 1') > 0, 'mass out of range: code, per-star status, message: ' // trim(msg))
    call hrtf_evaluate(g, [1.0_c_double, 1.0_c_double], [1e9_c_double], 0.014_c_double, f, stat, msg)
    call expect(stat == HRT_E_INVALID, 'arrays of different sizes: HRT_E_INVALID')
    call hrtf_evaluate(g, [1.0_c_double], [nan], 0.014_c_double, f, stat)
    call expect(stat == HRT_E_DOMAIN, 'NaN age: HRT_E_DOMAIN')
    call hrtf_star_new(s, g, 0.001_c_double, 0.014_c_double, stat, msg)
    call expect(stat == HRT_E_MASS_RANGE .and. .not. c_associated(s%ptr), 'star below the grid')
    call hrtf_star_new(s, g, 1.0_c_double, 0.014_c_double)
    call hrtf_star_at(s, -1.0_c_double, one, stat)
    call expect(stat == HRT_E_DOMAIN, 'negative age: HRT_E_DOMAIN')
    call hrtf_star_free(s)
    call hrtf_isochrone(g, 1e9_c_double, 0.9_c_double, f, stat, msg)
    call expect(stat == HRT_E_Z_RANGE .and. size(f) == 0, 'isochrone outside the grid: HRT_E_Z_RANGE')
    call hrtf_mass_range(g, 0.014_c_double, lo, hi)
    call expect(lo > 0.0_c_double .and. hi > lo, 'mass range')
    call expect(hrtf_phase_name(HRT_PHASE_MS) == 'main sequence', 'phase name from the library')
    call expect(hrtf_phase_key(HRT_PHASE_RGB) == 'rgb', 'phase key from the library')
    call expect(hrtf_strerror(HRT_E_MASS_RANGE) == 'initial mass outside the grid', 'hrtf_strerror')
    call expect(hrtf_route_name(g, 0) /= '', 'route name')
    call expect(len(hrtf_version()) > 0, 'version')
    call hrtf_close(g)
    call expect(.not. c_associated(g%ptr), 'hrtf_close nulls the handle')
  end subroutine test_errors

  !> hrtf_grid_upgrade on a current grid (versions 1 .. current are read) writes a grid that
  !> answers bit for bit as the original; failures report the path.
  subroutine test_upgrade()
    character(len=*), parameter :: out = 'test_fortran_upgraded.h5'
    type(hrt_grid_t) :: g, u
    real(c_double), allocatable :: m(:), z(:), a(:)
    type(hrt_state), allocatable :: fg(:), fu(:)
    integer :: stat, unit
    character(len=256) :: msg
    call hrtf_grid_upgrade(trim(grid_path), out, stat, msg)
    call expect(stat == HRT_OK .and. len_trim(msg) == 0, 'hrtf_grid_upgrade of the grid: ' // trim(msg))
    call hrtf_open(g, trim(grid_path))
    call hrtf_open(u, out, stat=stat, errmsg=msg)
    call expect(stat == HRT_OK, 'the upgraded grid opens: ' // trim(msg))
    if (stat == HRT_OK) then
       call draw_stars(g, 5000, m, z, a)
       call hrtf_evaluate(g, m, a, z, fg, stat)
       call hrtf_evaluate(u, m, a, z, fu, stat)
       call expect_same_states(fu, fg, 'the upgraded grid answers as the original')
       call hrtf_close(u)
    end if
    call hrtf_close(g)
    open (newunit=unit, file=out, status='old', iostat=stat)
    if (stat == 0) close (unit, status='delete')
    call hrtf_grid_upgrade('/nonexistent/old-grid.h5', out, stat, msg)
    call expect(stat == HRT_E_IO .and. index(msg, '/nonexistent/old-grid.h5') > 0, &
         'upgrade of a missing file: HRT_E_IO naming the path: ' // trim(msg))
    call hrtf_grid_upgrade(trim(grid_path), '/nonexistent/dir/new-grid.h5', stat, msg)
    call expect(stat == HRT_E_IO .and. index(msg, '/nonexistent/dir/new-grid.h5') > 0, &
         'upgrade into a missing directory: HRT_E_IO naming the path: ' // trim(msg))
  end subroutine test_upgrade

end program test_fortran
