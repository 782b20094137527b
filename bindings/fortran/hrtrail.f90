!> hrtrail: stellar evolution tracks from HDF5 grids, from Fortran.
!>
!> Two layers in one module:
!>  * bind(C) interfaces named as the C functions of include/hrtrail.h
!>    (hrt_eval, hrt_star_at, ...) and derived types mirroring its structs
!>    (hrt_state, hrt_error, hrt_phase_span), for code that wants the C API;
!>  * an idiomatic layer (hrtf_*): handle types hrt_grid_t and hrt_star_t,
!>    assumed-shape inputs, allocatable outputs, Fortran strings, optional
!>    arguments, and an optional status out-argument `stat` (with `errmsg`):
!>    when `stat` is absent a failure stops the program with the library's
!>    message, as ALLOCATE does without STAT=.
!>
!> Units as in the C header: masses in Msun, ages in yr since birth, Z the
!> metal mass fraction, log = log10, L in nominal Lsun, R in nominal Rsun,
!> Teff in K, g in cm s^-2 (IAU 2015 Resolution B3).  Names (fields of
!> hrt_state, arguments of the idiomatic layer) are the vocabulary of
!> tracks/FORMAT.md, units in the names; phases and remnant kinds are
!> hrtrail's codes (HRT_PHASE_*, HRT_REMNANT_*), their keys the text forms.
!>
!> ABI guard: hrtf_check_abi compares hrt_abi_version() and hrt_state_size()
!> with what this module was written for; hrtf_open calls it before opening
!> anything and fails with stat = HRTF_E_ABI on a mismatch.
!>
!> Accuracy: answers are as good as the grid; the default grid is a
!> semi-analytic model meant for population-level work (tracks/MODEL.md).
module hrtrail
  use, intrinsic :: iso_c_binding
  use, intrinsic :: iso_fortran_env, only: error_unit
  implicit none
  private

  !> The ABI this module was written for (HRT_ABI_VERSION); changed by hand only.
  integer, parameter, public :: HRTF_ABI_VERSION = 2
  !> stat value of the idiomatic layer when the library's ABI or hrt_state size differs.
  integer, parameter, public :: HRTF_E_ABI = -1

  ! Status codes (HRT_ERROR_LIST)
  integer(c_int), parameter, public :: HRT_OK = 0, HRT_E_NULL = 1, HRT_E_NOMEM = 2, HRT_E_IO = 3, &
       HRT_E_FORMAT = 4, HRT_E_VERSION = 5, HRT_E_DOMAIN = 6, HRT_E_MASS_RANGE = 7, &
       HRT_E_Z_RANGE = 8, HRT_E_AGE_RANGE = 9, HRT_E_BUFFER = 10, HRT_E_INVALID = 11, &
       HRT_E_NOT_FOUND = 12, HRT_E_INTERNAL = 13, HRT_E_NO_TRACK = 14, HRT_E_NO_MATCH = 15
  ! Phases (HRT_PHASE_LIST): hrtrail's codes, grouped by tens (tracks/FORMAT.md,
  ! "Phase and remnant codes"), in the order of the list.  Arrays indexed by
  ! phase code have HRT_PHASE_SLOTS entries (codes 0 .. HRT_PHASE_SLOTS-1);
  ! HRT_PHASE_N is the number of phases, hrt_phase_code(i) the i-th one's code.
  integer(c_int), parameter, public :: HRT_PHASE_UNKNOWN = 0, HRT_PHASE_PRE_MS = 10, HRT_PHASE_MS = 11, &
       HRT_PHASE_SUBGIANT = 20, HRT_PHASE_RGB = 21, HRT_PHASE_POST_RGB = 22, HRT_PHASE_CHEB = 30, &
       HRT_PHASE_EAGB = 31, HRT_PHASE_TPAGB = 32, HRT_PHASE_POST_AGB = 33, HRT_PHASE_BSG = 40, &
       HRT_PHASE_RSG = 41, HRT_PHASE_WR = 42, HRT_PHASE_WD = 50, HRT_PHASE_NS = 51, HRT_PHASE_BH = 52
  integer(c_int), parameter, public :: HRT_PHASE_SLOTS = 64, HRT_PHASE_N = 16
  ! Remnant kinds (HRT_REMNANT_LIST), the same way: HRT_REMNANT_SLOTS, HRT_REMNANT_N,
  ! hrt_remnant_code(i).
  integer(c_int), parameter, public :: HRT_REMNANT_NONE = 0, HRT_REMNANT_HE_WD = 10, &
       HRT_REMNANT_CO_WD = 11, HRT_REMNANT_ONE_WD = 12, HRT_REMNANT_NS = 20, HRT_REMNANT_BH = 30
  integer(c_int), parameter, public :: HRT_REMNANT_SLOTS = 32, HRT_REMNANT_N = 6
  ! Interpolation types (hrt_interp)
  integer(c_int), parameter, public :: HRT_INTERP_STEFFEN = 0, HRT_INTERP_LINEAR = 1, &
       HRT_INTERP_CSPLINE = 2, HRT_INTERP_AKIMA = 3
  ! Bits of hrt_state%flags
  integer(c_int32_t), parameter, public :: HRT_FLAG_DARK = 1, HRT_FLAG_REMNANT = 2, &
       HRT_FLAG_EXTRAPOLATED = 4, HRT_FLAG_NOT_MODELLED = 8, HRT_FLAG_BEYOND_LAW = 16

  !> State of one star at one age: struct hrt_state field for field, with its
  !> names (the vocabulary of tracks/FORMAT.md).
  type, bind(C), public :: hrt_state
     integer(c_int32_t) :: struct_size       !< sizeof(hrt_state) of the writer (uint32_t in C)
     integer(c_int32_t) :: status            !< HRT_OK or the HRT_E_* code of this star
     integer(c_int32_t) :: phase             !< HRT_PHASE_*
     integer(c_int32_t) :: route             !< route index in the grid, -1 if none
     integer(c_int32_t) :: remnant           !< HRT_REMNANT_*: the remnant it will leave (or is)
     integer(c_int32_t) :: flags             !< HRT_FLAG_* bits
     real(c_double) :: initial_mass_msun     !< initial mass, Msun
     real(c_double) :: z                     !< metal mass fraction
     real(c_double) :: age_yr                !< age since birth, yr
     real(c_double) :: log_l_lsun            !< log10 L/Lsun (NaN if dark)
     real(c_double) :: log_teff_k            !< log10 Teff/K (NaN if dark)
     real(c_double) :: log_r_rsun            !< log10 R/Rsun
     real(c_double) :: log_g_cgs             !< log10 g/(cm s^-2)
     real(c_double) :: mass_msun             !< current mass, Msun
     real(c_double) :: he_core_mass_msun     !< helium core mass, Msun
     real(c_double) :: co_core_mass_msun     !< carbon-oxygen core mass, Msun
     real(c_double) :: eep                   !< fractional EEP index (NaN for remnants, pre-MS)
     real(c_double) :: phase_fraction        !< 0..1 through the current phase (NaN if open-ended)
     real(c_double) :: phase_start_yr        !< age at which the current phase began, yr
     real(c_double) :: phase_end_yr          !< age at which it ends, yr (+inf if never)
     real(c_double) :: remnant_mass_msun     !< mass of the final remnant, Msun (NaN if unknown)
     real(c_double) :: reserved(7)           !< zero
  end type hrt_state

  !> struct hrt_error: the code and a NUL-terminated message.
  type, bind(C), public :: hrt_error
     integer(c_int) :: code
     character(kind=c_char) :: message(256)
  end type hrt_error

  !> struct hrt_phase_span: one phase [phase_start_yr, phase_end_yr).
  type, bind(C), public :: hrt_phase_span
     integer(c_int32_t) :: phase
     integer(c_int32_t) :: reserved_
     real(c_double) :: phase_start_yr        !< yr
     real(c_double) :: phase_end_yr          !< yr (+inf for a lasting remnant)
  end type hrt_phase_span

  !> An open grid (idiomatic layer).  Copies share the same C grid: close once.
  type, public :: hrt_grid_t
     type(c_ptr) :: ptr = c_null_ptr
  end type hrt_grid_t

  !> One star's interpolated track (idiomatic layer).  The grid must outlive it.
  type, public :: hrt_star_t
     type(c_ptr) :: ptr = c_null_ptr
  end type hrt_star_t

  ! ---------------------------------------------------------------- C API
  public :: hrt_abi_version, hrt_state_size, hrt_strerror, hrt_version, hrt_phase_name, hrt_phase_key, &
       hrt_phase_code, hrt_remnant_name, hrt_remnant_key, hrt_remnant_code, hrt_grid_open_with, &
       hrt_grid_close, hrt_default_grid_path, hrt_grid_n_z, hrt_grid_z, hrt_grid_z_ref, &
       hrt_grid_mass_range, hrt_grid_z_range, hrt_grid_n_routes, hrt_grid_route_name, hrt_grid_upgrade, &
       hrt_eval, hrt_star_new, hrt_star_free, hrt_star_at, hrt_star_n_eep, hrt_star_eep_state, &
       hrt_star_route, hrt_star_end_age, hrt_star_remnant, hrt_star_phases, hrt_isochrone
  interface
     function hrt_abi_version() bind(C, name="hrt_abi_version") result(r)
       import :: c_int
       integer(c_int) :: r
     end function hrt_abi_version
     function hrt_state_size() bind(C, name="hrt_state_size") result(r)
       import :: c_size_t
       integer(c_size_t) :: r
     end function hrt_state_size
     function hrt_strerror(code) bind(C, name="hrt_strerror") result(p)
       import :: c_int, c_ptr
       integer(c_int), value :: code
       type(c_ptr) :: p
     end function hrt_strerror
     function hrt_version() bind(C, name="hrt_version") result(p)
       import :: c_ptr
       type(c_ptr) :: p
     end function hrt_version
     function hrt_phase_name(phase) bind(C, name="hrt_phase_name") result(p)
       import :: c_int, c_ptr
       integer(c_int), value :: phase
       type(c_ptr) :: p
     end function hrt_phase_name
     function hrt_phase_key(phase) bind(C, name="hrt_phase_key") result(p)
       import :: c_int, c_ptr
       integer(c_int), value :: phase
       type(c_ptr) :: p
     end function hrt_phase_key
     !> Code of the i-th phase of HRT_PHASE_LIST (0 <= i < HRT_PHASE_N); -1 beyond.
     function hrt_phase_code(i) bind(C, name="hrt_phase_code") result(code)
       import :: c_int, c_size_t
       integer(c_size_t), value :: i
       integer(c_int) :: code
     end function hrt_phase_code
     function hrt_remnant_name(remnant) bind(C, name="hrt_remnant_name") result(p)
       import :: c_int, c_ptr
       integer(c_int), value :: remnant
       type(c_ptr) :: p
     end function hrt_remnant_name
     function hrt_remnant_key(remnant) bind(C, name="hrt_remnant_key") result(p)
       import :: c_int, c_ptr
       integer(c_int), value :: remnant
       type(c_ptr) :: p
     end function hrt_remnant_key
     !> Code of the i-th remnant kind of HRT_REMNANT_LIST (0 <= i < HRT_REMNANT_N); -1 beyond.
     function hrt_remnant_code(i) bind(C, name="hrt_remnant_code") result(code)
       import :: c_int, c_size_t
       integer(c_size_t), value :: i
       integer(c_int) :: code
     end function hrt_remnant_code
     !> path: NUL-terminated string or c_null_ptr for the default grid.
     function hrt_grid_open_with(path, interp, grid, err) bind(C, name="hrt_grid_open_with") result(rc)
       import :: c_int, c_ptr, hrt_error
       type(c_ptr), value :: path
       integer(c_int), value :: interp
       type(c_ptr), intent(out) :: grid
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_grid_open_with
     subroutine hrt_grid_close(grid) bind(C, name="hrt_grid_close")
       import :: c_ptr
       type(c_ptr), value :: grid
     end subroutine hrt_grid_close
     function hrt_default_grid_path() bind(C, name="hrt_default_grid_path") result(p)
       import :: c_ptr
       type(c_ptr) :: p
     end function hrt_default_grid_path
     function hrt_grid_n_z(grid) bind(C, name="hrt_grid_n_z") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t) :: n
     end function hrt_grid_n_z
     function hrt_grid_z(grid, iz) bind(C, name="hrt_grid_z") result(z)
       import :: c_ptr, c_size_t, c_double
       type(c_ptr), value :: grid
       integer(c_size_t), value :: iz
       real(c_double) :: z
     end function hrt_grid_z
     function hrt_grid_z_ref(grid) bind(C, name="hrt_grid_z_ref") result(z)
       import :: c_ptr, c_double
       type(c_ptr), value :: grid
       real(c_double) :: z
     end function hrt_grid_z_ref
     function hrt_grid_mass_range(grid, z, lo, hi) bind(C, name="hrt_grid_mass_range") result(rc)
       import :: c_ptr, c_double, c_int
       type(c_ptr), value :: grid
       real(c_double), value :: z
       real(c_double), intent(out) :: lo, hi
       integer(c_int) :: rc
     end function hrt_grid_mass_range
     function hrt_grid_z_range(grid, lo, hi) bind(C, name="hrt_grid_z_range") result(rc)
       import :: c_ptr, c_double, c_int
       type(c_ptr), value :: grid
       real(c_double), intent(out) :: lo, hi
       integer(c_int) :: rc
     end function hrt_grid_z_range
     function hrt_grid_n_routes(grid) bind(C, name="hrt_grid_n_routes") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t) :: n
     end function hrt_grid_n_routes
     function hrt_grid_route_name(grid, r) bind(C, name="hrt_grid_route_name") result(p)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t), value :: r
       type(c_ptr) :: p
     end function hrt_grid_route_name
     !> z: address of n metallicities, or c_null_ptr to use z_all for every star.
     function hrt_eval(grid, n, mass_msun, z, z_all, age_yr, out, err) bind(C, name="hrt_eval") result(rc)
       import :: c_ptr, c_size_t, c_double, c_int, hrt_state, hrt_error
       type(c_ptr), value :: grid
       integer(c_size_t), value :: n
       real(c_double), intent(in) :: mass_msun(*)
       type(c_ptr), value :: z
       real(c_double), value :: z_all
       real(c_double), intent(in) :: age_yr(*)
       type(hrt_state), intent(out) :: out(*)
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_eval
     function hrt_star_new(grid, mass_msun, z, star, err) bind(C, name="hrt_star_new") result(rc)
       import :: c_ptr, c_double, c_int, hrt_error
       type(c_ptr), value :: grid
       real(c_double), value :: mass_msun, z
       type(c_ptr), intent(out) :: star
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_star_new
     subroutine hrt_star_free(star) bind(C, name="hrt_star_free")
       import :: c_ptr
       type(c_ptr), value :: star
     end subroutine hrt_star_free
     function hrt_star_at(star, age_yr, out) bind(C, name="hrt_star_at") result(rc)
       import :: c_ptr, c_double, c_int, hrt_state
       type(c_ptr), value :: star
       real(c_double), value :: age_yr
       type(hrt_state), intent(out) :: out
       integer(c_int) :: rc
     end function hrt_star_at
     function hrt_star_n_eep(star) bind(C, name="hrt_star_n_eep") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: star
       integer(c_size_t) :: n
     end function hrt_star_n_eep
     function hrt_star_eep_state(star, j, out) bind(C, name="hrt_star_eep_state") result(rc)
       import :: c_ptr, c_size_t, c_int, hrt_state
       type(c_ptr), value :: star
       integer(c_size_t), value :: j
       type(hrt_state), intent(out) :: out
       integer(c_int) :: rc
     end function hrt_star_eep_state
     function hrt_star_route(star) bind(C, name="hrt_star_route") result(r)
       import :: c_ptr, c_int
       type(c_ptr), value :: star
       integer(c_int) :: r
     end function hrt_star_route
     function hrt_star_end_age(star) bind(C, name="hrt_star_end_age") result(t)
       import :: c_ptr, c_double
       type(c_ptr), value :: star
       real(c_double) :: t
     end function hrt_star_end_age
     function hrt_star_remnant(star, kind, mass_msun) bind(C, name="hrt_star_remnant") result(rc)
       import :: c_ptr, c_double, c_int
       type(c_ptr), value :: star
       integer(c_int), intent(out) :: kind
       real(c_double), intent(out) :: mass_msun
       integer(c_int) :: rc
     end function hrt_star_remnant
     function hrt_star_phases(star, spans, cap, n) bind(C, name="hrt_star_phases") result(rc)
       import :: c_ptr, c_size_t, c_int
       type(c_ptr), value :: star
       type(c_ptr), value :: spans
       integer(c_size_t), value :: cap
       integer(c_size_t), intent(out) :: n
       integer(c_int) :: rc
     end function hrt_star_phases
     function hrt_isochrone(grid, age_yr, z, out, cap, n, err) bind(C, name="hrt_isochrone") result(rc)
       import :: c_ptr, c_double, c_size_t, c_int, hrt_error
       type(c_ptr), value :: grid
       real(c_double), value :: age_yr, z
       type(c_ptr), value :: out
       integer(c_size_t), value :: cap
       integer(c_size_t), intent(out) :: n
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_isochrone
     !> Convert a grid file of an older format version; paths NUL-terminated.
     function hrt_grid_upgrade(old_path, new_path, err) bind(C, name="hrt_grid_upgrade") result(rc)
       import :: c_char, c_int, hrt_error
       character(kind=c_char), intent(in) :: old_path(*), new_path(*)
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_grid_upgrade
     function c_strlen(s) bind(C, name="strlen") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: s
       integer(c_size_t) :: n
     end function c_strlen
  end interface

  ! ---------------------------------------------------------- idiomatic layer
  public :: hrtf_check_abi, hrtf_check_abi_values, hrtf_open, hrtf_close, hrtf_grid_upgrade, &
       hrtf_evaluate, hrtf_star_new, hrtf_star_at, hrtf_star_track, hrtf_star_phases, hrtf_star_remnant, &
       hrtf_star_end_age, hrtf_star_free, hrtf_isochrone, hrtf_z_values, hrtf_mass_range, hrtf_route_name, &
       hrtf_phase_name, hrtf_phase_key, hrtf_remnant_name, hrtf_strerror, hrtf_version, hrtf_string

  !> States of many stars in one hrt_eval call; z is one metallicity or one per star.
  interface hrtf_evaluate
     module procedure evaluate_z_all, evaluate_z_each
  end interface hrtf_evaluate

contains

  !> Fortran copy of a NUL-terminated C string ('' for a NULL pointer).
  function hrtf_string(p) result(s)
    type(c_ptr), intent(in) :: p
    character(len=:), allocatable :: s
    character(kind=c_char), pointer :: chars(:)
    integer :: i, n
    if (.not. c_associated(p)) then
       s = ''
       return
    end if
    n = int(c_strlen(p))
    call c_f_pointer(p, chars, [n])
    allocate (character(len=n) :: s)
    do i = 1, n
       s(i:i) = chars(i)
    end do
  end function hrtf_string

  !> A struct hrt_error with code 0 and an empty message.
  function blank_error() result(err)
    type(hrt_error) :: err
    err%code = 0
    err%message = c_null_char
  end function blank_error

  function error_text(err) result(s)
    type(hrt_error), intent(in) :: err
    character(len=:), allocatable :: s
    integer :: n
    n = 0
    do while (n < size(err%message))
       if (err%message(n + 1) == c_null_char) exit
       n = n + 1
    end do
    allocate (character(len=n) :: s)
    s = transfer(err%message(1:n), s)
  end function error_text

  !> Set stat/errmsg, or stop with the message when stat is absent.
  subroutine report(rc, msg, stat, errmsg)
    integer, intent(in) :: rc
    character(len=*), intent(in) :: msg
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    if (present(stat)) stat = rc
    if (present(errmsg)) then
       errmsg = ''
       if (rc /= HRT_OK) errmsg = msg
    end if
    if (rc /= HRT_OK .and. .not. present(stat)) then
       write (error_unit, '(a)') 'hrtrail: ' // msg
       error stop 1
    end if
  end subroutine report

  !> Compare an ABI number and hrt_state size with what this module was written for.
  subroutine hrtf_check_abi_values(abi, state_size, stat, errmsg)
    integer, intent(in) :: abi
    integer(c_size_t), intent(in) :: state_size
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_state) :: probe
    character(len=240) :: msg
    if (abi == HRTF_ABI_VERSION .and. state_size == c_sizeof(probe)) then
       call report(HRT_OK, '', stat, errmsg)
    else
       write (msg, '(a,i0,a,i0,a,i0,a,i0,a)') 'the library reports ABI ', abi, ' and sizeof(hrt_state) = ', &
            state_size, ' bytes; this Fortran module was written for ABI ', HRTF_ABI_VERSION, ' and ', &
            c_sizeof(probe), ' bytes: rebuild it against the installed library'
       call report(HRTF_E_ABI, trim(msg), stat, errmsg)
    end if
  end subroutine hrtf_check_abi_values

  !> The ABI guard: the loaded library's hrt_abi_version() and hrt_state_size() must match.
  subroutine hrtf_check_abi(stat, errmsg)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    call hrtf_check_abi_values(int(hrt_abi_version()), hrt_state_size(), stat, errmsg)
  end subroutine hrtf_check_abi

  !> Open a grid file (tracks/FORMAT.md), or the default grid when path is absent.
  !> interp: HRT_INTERP_* (default HRT_INTERP_STEFFEN).  Checks the ABI first.
  subroutine hrtf_open(grid, path, interp, stat, errmsg)
    type(hrt_grid_t), intent(out) :: grid
    character(len=*), intent(in), optional :: path
    integer, intent(in), optional :: interp
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    character(kind=c_char, len=:), allocatable, target :: cpath
    type(hrt_error) :: err
    integer :: rc, it
    character(len=256) :: abimsg
    call hrtf_check_abi(rc, abimsg)
    if (rc /= HRT_OK) then
       call report(rc, trim(abimsg), stat, errmsg)
       return
    end if
    it = HRT_INTERP_STEFFEN
    if (present(interp)) it = interp
    if (present(path)) then
       cpath = trim(path) // c_null_char
       err = blank_error()
       rc = hrt_grid_open_with(c_loc(cpath), int(it, c_int), grid%ptr, err)
    else
       err = blank_error()
       rc = hrt_grid_open_with(c_null_ptr, int(it, c_int), grid%ptr, err)
    end if
    if (rc /= HRT_OK) grid%ptr = c_null_ptr
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_open

  !> Free the grid (no star made from it may be used afterwards).
  subroutine hrtf_close(grid)
    type(hrt_grid_t), intent(inout) :: grid
    call hrt_grid_close(grid%ptr)
    grid%ptr = c_null_ptr
  end subroutine hrtf_close

  !> Convert the grid file old_path of an older format version (tracks/FORMAT.md,
  !> "Version history") to the current one, written atomically to new_path
  !> (which may be old_path itself).
  subroutine hrtf_grid_upgrade(old_path, new_path, stat, errmsg)
    character(len=*), intent(in) :: old_path, new_path
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer :: rc
    err = blank_error()
    rc = hrt_grid_upgrade(trim(old_path) // c_null_char, trim(new_path) // c_null_char, err)
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_grid_upgrade

  subroutine evaluate_core(grid, mass_msun, age_yr, zp, z_all, states, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: mass_msun(:), age_yr(:)
    type(c_ptr), intent(in) :: zp
    real(c_double), intent(in) :: z_all
    type(hrt_state), allocatable, intent(out) :: states(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer :: rc
    allocate (states(size(mass_msun)))
    if (size(age_yr) /= size(mass_msun)) then
       call report(HRT_E_INVALID, 'hrtf_evaluate: mass_msun and age_yr differ in size', stat, errmsg)
       return
    end if
    if (size(mass_msun) == 0) then
       call report(HRT_OK, '', stat, errmsg)
       return
    end if
    err = blank_error()
    rc = hrt_eval(grid%ptr, int(size(mass_msun), c_size_t), mass_msun, zp, z_all, age_yr, states, err)
    call report(rc, error_text(err), stat, errmsg)
  end subroutine evaluate_core

  !> States of size(mass_msun) stars of initial masses mass_msun (Msun), all of
  !> metallicity z, at ages age_yr (yr).  states(i)%status holds each star's code;
  !> stat the first failure's (every star is evaluated whatever the others do).
  subroutine evaluate_z_all(grid, mass_msun, age_yr, z, states, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: mass_msun(:), age_yr(:)
    real(c_double), intent(in) :: z
    type(hrt_state), allocatable, intent(out) :: states(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    call evaluate_core(grid, mass_msun, age_yr, c_null_ptr, z, states, stat, errmsg)
  end subroutine evaluate_z_all

  !> As above with one metallicity per star.
  subroutine evaluate_z_each(grid, mass_msun, age_yr, z, states, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: mass_msun(:), age_yr(:)
    real(c_double), intent(in), contiguous, target :: z(:)
    type(hrt_state), allocatable, intent(out) :: states(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    if (size(z) /= size(mass_msun)) then
       allocate (states(size(mass_msun)))
       call report(HRT_E_INVALID, 'hrtf_evaluate: z and mass_msun differ in size', stat, errmsg)
       return
    end if
    if (size(z) == 0) then
       call evaluate_core(grid, mass_msun, age_yr, c_null_ptr, 0.0_c_double, states, stat, errmsg)
    else
       call evaluate_core(grid, mass_msun, age_yr, c_loc(z), 0.0_c_double, states, stat, errmsg)
    end if
  end subroutine evaluate_z_each

  !> Interpolate the track of one star of initial mass (Msun) and metallicity z.
  subroutine hrtf_star_new(star, grid, mass_msun, z, stat, errmsg)
    type(hrt_star_t), intent(out) :: star
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: mass_msun, z
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer :: rc
    err = blank_error()
    rc = hrt_star_new(grid%ptr, mass_msun, z, star%ptr, err)
    if (rc /= HRT_OK) star%ptr = c_null_ptr
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_star_new

  !> State of the star at age_yr (yr since birth).
  subroutine hrtf_star_at(star, age_yr, state, stat, errmsg)
    type(hrt_star_t), intent(in) :: star
    real(c_double), intent(in) :: age_yr
    type(hrt_state), intent(out) :: state
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    integer :: rc
    rc = hrt_star_at(star%ptr, age_yr, state)
    call report(rc, 'hrt_star_at: ' // hrtf_string(hrt_strerror(int(rc, c_int))), stat, errmsg)
  end subroutine hrtf_star_at

  !> The star's interpolated track: its state at every EEP.
  subroutine hrtf_star_track(star, states, stat, errmsg)
    type(hrt_star_t), intent(in) :: star
    type(hrt_state), allocatable, intent(out) :: states(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    integer(c_size_t) :: j, n
    integer :: rc
    n = hrt_star_n_eep(star%ptr)
    allocate (states(n))
    do j = 1, n
       rc = hrt_star_eep_state(star%ptr, j - 1, states(j))
       if (rc /= HRT_OK) then
          call report(rc, 'hrt_star_eep_state: ' // hrtf_string(hrt_strerror(int(rc, c_int))), stat, errmsg)
          return
       end if
    end do
    call report(HRT_OK, '', stat, errmsg)
  end subroutine hrtf_star_track

  !> The star's timetable: its phases in order, including the remnant.
  subroutine hrtf_star_phases(star, spans, stat, errmsg)
    type(hrt_star_t), intent(in) :: star
    type(hrt_phase_span), allocatable, target, intent(out) :: spans(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    integer(c_size_t) :: n, cap
    integer :: rc
    n = 0
    rc = hrt_star_phases(star%ptr, c_null_ptr, 0_c_size_t, n)
    cap = n
    allocate (spans(cap))
    if (cap > 0) rc = hrt_star_phases(star%ptr, c_loc(spans), cap, n)
    call report(rc, 'hrt_star_phases: ' // hrtf_string(hrt_strerror(int(rc, c_int))), stat, errmsg)
  end subroutine hrtf_star_phases

  !> Final remnant of the star: its kind (HRT_REMNANT_*) and mass (Msun).
  subroutine hrtf_star_remnant(star, remnant, remnant_mass_msun)
    type(hrt_star_t), intent(in) :: star
    integer, intent(out) :: remnant
    real(c_double), intent(out) :: remnant_mass_msun
    integer(c_int) :: k
    integer :: rc
    rc = hrt_star_remnant(star%ptr, k, remnant_mass_msun)
    remnant = k
    if (rc /= HRT_OK) remnant = HRT_REMNANT_NONE
  end subroutine hrtf_star_remnant

  !> Age of the star's last EEP, yr (white dwarf cooling onset or core collapse).
  function hrtf_star_end_age(star) result(t)
    type(hrt_star_t), intent(in) :: star
    real(c_double) :: t
    t = hrt_star_end_age(star%ptr)
  end function hrtf_star_end_age

  !> Free the star; a null star is allowed.
  subroutine hrtf_star_free(star)
    type(hrt_star_t), intent(inout) :: star
    call hrt_star_free(star%ptr)
    star%ptr = c_null_ptr
  end subroutine hrtf_star_free

  !> The isochrone at age_yr (yr) and metallicity z: states ordered by route, EEP, mass.
  subroutine hrtf_isochrone(grid, age_yr, z, states, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: age_yr, z
    type(hrt_state), allocatable, target, intent(out) :: states(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer(c_size_t) :: n, cap
    integer :: rc
    n = 0
    err = blank_error()
    rc = hrt_isochrone(grid%ptr, age_yr, z, c_null_ptr, 0_c_size_t, n, err)
    if (rc == HRT_E_BUFFER) then
       cap = n
       allocate (states(cap))
       err = blank_error()
       rc = hrt_isochrone(grid%ptr, age_yr, z, c_loc(states), cap, n, err)
    else
       allocate (states(0))
    end if
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_isochrone

  !> Metal mass fractions of the grid's groups, ascending.
  function hrtf_z_values(grid) result(z)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), allocatable :: z(:)
    integer(c_size_t) :: i, n
    n = hrt_grid_n_z(grid%ptr)
    allocate (z(n))
    do i = 1, n
       z(i) = hrt_grid_z(grid%ptr, i - 1)
    end do
  end function hrtf_z_values

  !> Range of initial masses (Msun) covered at metallicity z.
  subroutine hrtf_mass_range(grid, z, lo_msun, hi_msun, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: z
    real(c_double), intent(out) :: lo_msun, hi_msun
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    integer :: rc
    rc = hrt_grid_mass_range(grid%ptr, z, lo_msun, hi_msun)
    call report(rc, 'hrt_grid_mass_range: ' // hrtf_string(hrt_strerror(int(rc, c_int))), stat, errmsg)
  end subroutine hrtf_mass_range

  !> Name of a route (its 0-based index, as in hrt_state%route).
  function hrtf_route_name(grid, route) result(s)
    type(hrt_grid_t), intent(in) :: grid
    integer, intent(in) :: route
    character(len=:), allocatable :: s
    s = hrtf_string(hrt_grid_route_name(grid%ptr, int(route, c_size_t)))
  end function hrtf_route_name

  !> Descriptive name of a phase ("main sequence", ...).
  function hrtf_phase_name(phase) result(s)
    integer, intent(in) :: phase
    character(len=:), allocatable :: s
    s = hrtf_string(hrt_phase_name(int(phase, c_int)))
  end function hrtf_phase_name

  !> Short key of a phase ("ms", "rgb", ...).
  function hrtf_phase_key(phase) result(s)
    integer, intent(in) :: phase
    character(len=:), allocatable :: s
    s = hrtf_string(hrt_phase_key(int(phase, c_int)))
  end function hrtf_phase_key

  !> Name of a remnant kind ("carbon-oxygen white dwarf", ...).
  function hrtf_remnant_name(remnant) result(s)
    integer, intent(in) :: remnant
    character(len=:), allocatable :: s
    s = hrtf_string(hrt_remnant_name(int(remnant, c_int)))
  end function hrtf_remnant_name

  !> Short description of a status code.
  function hrtf_strerror(code) result(s)
    integer, intent(in) :: code
    character(len=:), allocatable :: s
    s = hrtf_string(hrt_strerror(int(code, c_int)))
  end function hrtf_strerror

  !> Version of the loaded library, e.g. "0.2.0".
  function hrtf_version() result(s)
    character(len=:), allocatable :: s
    s = hrtf_string(hrt_version())
  end function hrtf_version

end module hrtrail
