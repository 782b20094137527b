!> hrtrail: stellar evolution tracks from HDF5 grids, from Fortran.
!>
!> Two layers in one module:
!>  * bind(C) interfaces named as the C functions of include/hrtrail.h
!>    (hrt_eval, hrt_star_at, hrt_pop_run, hrt_fit_star, ...) and derived
!>    types mirroring its structs field for field (hrt_state, hrt_imf,
!>    hrt_pop_spec, hrt_pop_summary, hrt_fit_obs, hrt_fit_result,
!>    hrt_forecast_result, hrt_import_track_report, ...), for code that wants
!>    the C API: every public function but the low-level grid builder and
!>    keypoint search (hrt_builder_*, hrt_keypoints_*), whose column structs
!>    hold C arrays by address;
!>  * an idiomatic layer (hrtf_*): handle types hrt_grid_t, hrt_star_t and
!>    hrt_fit_model_t, assumed-shape inputs, allocatable outputs, Fortran
!>    strings, optional arguments, and an optional status out-argument `stat`
!>    (with `errmsg`): when `stat` is absent a failure stops the program with
!>    the library's message, as ALLOCATE does without STAT=.  Grids, batches
!>    (hrtf_evaluate, hrtf_evaluate_parallel), stars, isochrones
!>    (hrtf_isochrone, hrtf_isochrone_with), the default routes, populations
!>    (hrtf_imf_init, hrtf_sfh_*, hrtf_zdist_*, hrtf_pop_draw, hrtf_pop_run,
!>    hrtf_pop_summary_add, hrtf_pop_summary_merge), fits (hrtf_fit_model_new,
!>    hrtf_fit_star), forecasts (hrtf_forecast) and importing text tracks into
!>    a grid (hrtf_import_new, hrtf_import_map, hrtf_import_add_file,
!>    hrtf_import_run, hrtf_import_report), and how accurate a grid's interpolation is
!>    (hrtf_accuracy, hrtf_interp_error, hrtf_has_interp_error).
!>
!> Arrays that C indexes by code (phase_prob, n_phase, n_remnant, n_status,
!> remnant_prob, future) start at 1 here: the entry of code c is (c + 1).
!> C's uint64_t fields are integer(c_int64_t).
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
  use, intrinsic :: ieee_arithmetic, only: ieee_value, ieee_quiet_nan
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
       HRT_E_NOT_FOUND = 12, HRT_E_INTERNAL = 13, HRT_E_NO_TRACK = 14, HRT_E_NO_MATCH = 15, &
       HRT_E_NO_EQUIVALENT = 16
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

  ! ------------------------------------------------------------ isochrones
  !> struct hrt_isochrone_options: what an isochrone holds (hrtf_isochrone_options() gives the defaults).
  type, bind(C), public :: hrt_isochrone_options
     integer(c_int64_t) :: phases            !< phases included, hrtf_phase_bit(code) each (uint64_t in C)
     real(c_double) :: max_dlog_l            !< largest log L step between neighbours of one phase, dex
     real(c_double) :: reserved(6)           !< zero
  end type hrt_isochrone_options
  !> Default largest log L step between neighbours on an isochrone, dex (HRT_ISOCHRONE_MAX_DLOG_L).
  real(c_double), parameter, public :: HRT_ISOCHRONE_MAX_DLOG_L = 0.02_c_double
  !> The remnant phases (white dwarf, neutron star, black hole) as a phase mask (HRT_PHASES_REMNANT).
  integer(c_int64_t), parameter, public :: HRT_PHASES_REMNANT = &
       ibset(ibset(ibset(0_c_int64_t, HRT_PHASE_WD), HRT_PHASE_NS), HRT_PHASE_BH)

  ! ------------------------------------------------------------ routes
  !> Room for keypoint names of one route (HRT_IMPORT_MAX_KP).
  integer, parameter, public :: HRT_IMPORT_MAX_KP = 32
  !> struct hrt_route_spec: the EEP layout of one route (C strings and arrays by address).
  type, bind(C), public :: hrt_route_spec
     type(c_ptr) :: name = c_null_ptr            !< const char *: route name
     integer(c_size_t) :: n_keypoints = 0        !< number of keypoints
     type(c_ptr) :: keypoint_names = c_null_ptr  !< const char *const *: n_keypoints names
     type(c_ptr) :: segment_samples = c_null_ptr !< const int *: n_keypoints - 1 EEP counts
  end type hrt_route_spec

  ! ------------------------------------------------------------ populations
  ! IMF kinds (hrt_imf_kind), SFH kinds (hrt_sfh_kind), metallicity distributions (hrt_zdist_kind)
  integer(c_int), parameter, public :: HRT_IMF_SALPETER_1955 = 0, HRT_IMF_KROUPA_2001 = 1, &
       HRT_IMF_CHABRIER_2003_SYSTEM = 2, HRT_IMF_POWER_LAW = 3
  integer(c_int), parameter, public :: HRT_SFH_BURST = 0, HRT_SFH_CONSTANT = 1, HRT_SFH_EXPONENTIAL = 2, &
       HRT_SFH_TABLE = 3
  integer(c_int), parameter, public :: HRT_ZDIST_FIXED = 0, HRT_ZDIST_LOG_UNIFORM = 1, HRT_ZDIST_LOG_NORMAL = 2
  integer, parameter, public :: HRT_IMF_MAX_SEGMENTS = 4, HRT_POP_MAX_STATUS = 32, HRT_POP_HR_MAX_BINS = 10000
  ! catalogue formats (hrt_pop_catalogue_open)
  integer(c_int), parameter, public :: HRT_CATALOGUE_CSV = 0, HRT_CATALOGUE_HDF5 = 1

  !> struct hrt_imf: an IMF between mass limits, set up by hrtf_imf_init (segments are derived data).
  type, bind(C), public :: hrt_imf
     integer(c_int32_t) :: kind = -1                         !< HRT_IMF_*
     integer(c_int32_t) :: n_seg = 0                         !< segments between m_lo and m_hi
     real(c_double) :: m_lo_msun = 0, m_hi_msun = 0          !< mass limits, Msun
     real(c_double) :: alpha = 0                             !< slope of HRT_IMF_POWER_LAW
     integer(c_int32_t) :: seg_lognormal(HRT_IMF_MAX_SEGMENTS) = 0 !< 1: log-normal segment
     real(c_double) :: seg_lo(HRT_IMF_MAX_SEGMENTS) = 0      !< segment limits, Msun
     real(c_double) :: seg_hi(HRT_IMF_MAX_SEGMENTS) = 0
     real(c_double) :: seg_a(HRT_IMF_MAX_SEGMENTS) = 0       !< power law: alpha; log-normal: log10 m_c
     real(c_double) :: seg_s(HRT_IMF_MAX_SEGMENTS) = 0       !< log-normal: sigma, dex
     real(c_double) :: seg_amp(HRT_IMF_MAX_SEGMENTS) = 0     !< amplitude of the segment
     real(c_double) :: seg_c0(HRT_IMF_MAX_SEGMENTS) = 0      !< quantile constants
     real(c_double) :: seg_c1(HRT_IMF_MAX_SEGMENTS) = 0
     real(c_double) :: seg_cum(HRT_IMF_MAX_SEGMENTS + 1) = 0 !< cumulative number fraction at segment starts
     real(c_double) :: norm = 0                              !< integral of the unnormalised dN/dm
  end type hrt_imf

  !> struct hrt_sfh: a star-formation history; times since the population began, yr.
  !> A table (HRT_SFH_TABLE) is borrowed by address: see hrtf_sfh_table.
  type, bind(C), public :: hrt_sfh
     integer(c_int32_t) :: kind = HRT_SFH_BURST      !< HRT_SFH_*
     integer(c_int32_t) :: reserved_ = 0
     real(c_double) :: t_start_yr = 0                !< burst time, or start of star formation
     real(c_double) :: t_end_yr = 0                  !< end of star formation (CONSTANT, EXPONENTIAL)
     real(c_double) :: tau_yr = 0                    !< e-folding time (EXPONENTIAL)
     integer(c_size_t) :: n_table = 0                !< points of the table (TABLE)
     type(c_ptr) :: table_t_yr = c_null_ptr          !< const double *: strictly increasing times, yr
     type(c_ptr) :: table_rate = c_null_ptr          !< const double *: rates at those times
  end type hrt_sfh

  !> struct hrt_zdist: a metallicity distribution.
  type, bind(C), public :: hrt_zdist
     integer(c_int32_t) :: kind = HRT_ZDIST_FIXED    !< HRT_ZDIST_*
     integer(c_int32_t) :: reserved_ = 0
     real(c_double) :: z = 0                         !< FIXED: the metallicity; LOG_NORMAL: the median
     real(c_double) :: z_lo = 0, z_hi = 0            !< limits of LOG_UNIFORM and LOG_NORMAL
     real(c_double) :: sigma_dex = 0                 !< LOG_NORMAL: spread of log10 Z, dex
  end type hrt_zdist

  !> struct hrt_pop_spec: everything that defines a population (hrtf_pop_spec_default() gives the defaults).
  !> uint64_t fields are integer(c_int64_t) here.
  type, bind(C), public :: hrt_pop_spec
     type(hrt_imf) :: imf
     type(hrt_sfh) :: sfh
     type(hrt_zdist) :: zdist
     integer(c_int64_t) :: n_stars = 0               !< stars drawn
     integer(c_int64_t) :: seed = 1                  !< any bits; with chunk_size it fixes every draw
     integer(c_int64_t) :: chunk_size = 65536        !< stars per random stream
  end type hrt_pop_spec

  !> struct hrt_pop_sum: value = (hi * 2^64 + lo) * 2^-32 (unsigned); read with hrtf_pop_sum_value.
  type, bind(C), public :: hrt_pop_sum
     integer(c_int64_t) :: hi = 0, lo = 0
  end type hrt_pop_sum

  !> struct hrt_pop_hr: binning of the HR-diagram histogram, log10 Teff/K (x) by log10 L/Lsun (y).
  type, bind(C), public :: hrt_pop_hr
     real(c_double) :: log_teff_k_lo = 0, log_teff_k_hi = 0
     real(c_double) :: log_l_lsun_lo = 0, log_l_lsun_hi = 0
     integer(c_int64_t) :: nx = 0, ny = 0            !< bins, nx * ny <= HRT_POP_HR_MAX_BINS
  end type hrt_pop_hr

  !> struct hrt_pop_summary: a population at one epoch, field for field (include/hrtrail/population.h).
  !> Arrays indexed by code in C are 1-based here: n_phase(code + 1), n_remnant(code + 1), n_status(code + 1).
  type, bind(C), public :: hrt_pop_summary
     integer(c_int64_t) :: struct_size
     real(c_double) :: age_yr                         !< epoch: age of the population, yr
     integer(c_int64_t) :: n_drawn, n_unborn, n_evaluated
     integer(c_int64_t) :: n_status(HRT_POP_MAX_STATUS)
     type(hrt_pop_sum) :: failed_initial_mass_msun
     integer(c_int64_t) :: n_phase(HRT_PHASE_SLOTS)
     type(hrt_pop_sum) :: phase_initial_mass_msun(HRT_PHASE_SLOTS)
     type(hrt_pop_sum) :: phase_mass_msun(HRT_PHASE_SLOTS)
     type(hrt_pop_sum) :: phase_l_lsun(HRT_PHASE_SLOTS)
     integer(c_int64_t) :: n_remnant(HRT_REMNANT_SLOTS)
     type(hrt_pop_sum) :: remnant_mass_msun(HRT_REMNANT_SLOTS)
     type(hrt_pop_sum) :: initial_mass_msun, mass_msun, l_lsun
     real(c_double) :: ms_max_initial_mass_msun       !< most massive star on the main sequence, Msun
     real(c_double) :: evolved_min_initial_mass_msun  !< least massive star past the main sequence, Msun
     type(hrt_pop_hr) :: hr
     integer(c_int64_t) :: hr_outside                 !< luminous stars outside the histogram's box
     integer(c_int64_t) :: hr_count(HRT_POP_HR_MAX_BINS) !< bin (ix, iy) (0-based) at hr_count(iy * nx + ix + 1)
  end type hrt_pop_summary

  ! ------------------------------------------------------------ fitting and forecasts
  ! Mass priors (hrt_fit_mass_prior) and bits of hrt_fit_result%flags
  integer(c_int), parameter, public :: HRT_FIT_PRIOR_KROUPA_2001 = 0, HRT_FIT_PRIOR_CHABRIER_2003 = 1, &
       HRT_FIT_PRIOR_LOG_FLAT = 2
  integer(c_int32_t), parameter, public :: HRT_FIT_MULTIMODAL = 1, HRT_FIT_MASS_EDGE = 2, HRT_FIT_AGE_LIMIT = 4, &
       HRT_FIT_FEH_EDGE = 8, HRT_FIT_POOR_MATCH = 16, HRT_FIT_FEW_POINTS = 32
  real(c_double), parameter, public :: HRT_FIT_MULTIMODAL_PROB = 0.1_c_double
  integer, parameter, public :: HRT_FORECAST_MAX_EVENTS = 24

  !> struct hrt_fit_model_options: priors and resolution of a fitting lattice (hrtf_fit_model_options()).
  type, bind(C), public :: hrt_fit_model_options
     integer(c_int32_t) :: mass_prior                 !< HRT_FIT_PRIOR_*
     integer(c_int32_t) :: reserved_
     real(c_double) :: mass_min_msun, mass_max_msun   !< limits of the mass prior, Msun
     real(c_double) :: age_max_yr                     !< age prior uniform in [0, age_max_yr]
     real(c_double) :: feh_min, feh_max               !< [Fe/H] range of the lattice, dex
     real(c_double) :: feh_step_dex                   !< spacing of the [Fe/H] nodes, dex
     real(c_double) :: log_mass_step_dex              !< spacing in log10 initial mass, dex
  end type hrt_fit_model_options

  !> struct hrt_fit_obs: what was measured of one star (NaN: not measured; hrtf_fit_obs() sets all NaN).
  type, bind(C), public :: hrt_fit_obs
     real(c_double) :: teff_k, teff_k_sigma           !< effective temperature, K (required)
     real(c_double) :: log_l_lsun, log_l_lsun_sigma   !< log10 L/Lsun, dex
     real(c_double) :: feh, feh_sigma                 !< [Fe/H] of the grid's Z_ref, dex
     real(c_double) :: log_g_cgs, log_g_cgs_sigma     !< log10 g/(cm s^-2)
     real(c_double) :: flux_w_m2, flux_w_m2_sigma     !< bolometric flux, W m^-2
     real(c_double) :: mbol, mbol_sigma               !< apparent bolometric magnitude
     real(c_double) :: distance_pc, distance_pc_sigma !< distance, pc
     real(c_double) :: parallax_mas, parallax_mas_sigma !< parallax, mas
  end type hrt_fit_obs

  !> struct hrt_fit_interval: median and the central 68.27 % interval.
  type, bind(C), public :: hrt_fit_interval
     real(c_double) :: median, lo, hi
  end type hrt_fit_interval

  !> struct hrt_fit_sample: one posterior draw.
  type, bind(C), public :: hrt_fit_sample
     real(c_double) :: initial_mass_msun = 0          !< Msun
     real(c_double) :: z = 0                          !< metal mass fraction
     real(c_double) :: age_yr = 0                     !< yr
     real(c_double) :: log_l_lsun = 0, log_teff_k = 0 !< of the lattice point drawn
     integer(c_int32_t) :: phase = 0                  !< HRT_PHASE_* of the lattice point drawn
     integer(c_int32_t) :: reserved_ = 0
  end type hrt_fit_sample

  !> struct hrt_fit_result: the posterior of one star; phase_prob(code + 1) is the probability of phase code.
  type, bind(C), public :: hrt_fit_result
     integer(c_int32_t) :: struct_size, status, flags, phase, phase_second, n_obs
     type(hrt_fit_interval) :: initial_mass_msun, age_yr, feh, mass_msun, r_rsun, log_l_lsun, teff_k, &
          log_g_cgs, distance_pc
     real(c_double) :: phase_prob(HRT_PHASE_SLOTS)
     type(hrt_fit_interval) :: phase_mass_msun(2), phase_age_yr(2)
     real(c_double) :: chi2_min, n_eff, n_points
     real(c_double) :: reserved(8)
  end type hrt_fit_result

  !> struct hrt_forecast_state: the star at one future time, over the samples.
  type, bind(C), public :: hrt_forecast_state
     real(c_double) :: dt_yr                          !< time from now, yr
     integer(c_int32_t) :: phase, reserved_           !< most probable phase then
     real(c_double) :: phase_prob(HRT_PHASE_SLOTS)    !< by phase code + 1
     real(c_double) :: luminous_frac
     type(hrt_fit_interval) :: log_l_lsun, teff_k, r_rsun, mass_msun
  end type hrt_forecast_state

  !> struct hrt_forecast_event: a keypoint still to come (hrtf_forecast_event_name gives its name).
  type, bind(C), public :: hrt_forecast_event
     character(kind=c_char) :: name(32)
     real(c_double) :: prob                           !< fraction of samples that still have it ahead
     type(hrt_fit_interval) :: in_yr                  !< time until it, yr
  end type hrt_forecast_event

  !> struct hrt_forecast_phase: a phase still to come.
  type, bind(C), public :: hrt_forecast_phase
     real(c_double) :: prob
     type(hrt_fit_interval) :: start_in_yr, duration_yr
  end type hrt_forecast_phase

  !> struct hrt_forecast_result: the future of a star; arrays by code are 1-based (code + 1).
  type, bind(C), public :: hrt_forecast_result
     integer(c_int32_t) :: struct_size, status, remnant, phase_now
     real(c_double) :: n_samples
     real(c_double) :: phase_now_prob(HRT_PHASE_SLOTS)
     real(c_double) :: ms_prob
     type(hrt_fit_interval) :: ms_left_yr, end_in_yr
     type(hrt_forecast_phase) :: future(HRT_PHASE_SLOTS)
     integer(c_size_t) :: n_events
     type(hrt_forecast_event) :: events(HRT_FORECAST_MAX_EVENTS)
     real(c_double) :: remnant_prob(HRT_REMNANT_SLOTS)
     type(hrt_fit_interval) :: remnant_mass_msun
     real(c_double) :: reserved(8)
  end type hrt_forecast_result

  !> struct hrt_ms_options: which main sequence hrt_ms_new samples (hrt_ms_options_default fills it).
  type, bind(C), public :: hrt_ms_options
     real(c_double) :: age_min_yr = 0                 !< youngest age counted, yr
     real(c_double) :: age_max_yr = huge(1.0_c_double) !< oldest age counted, yr (default +inf from C)
     real(c_double) :: imf_alpha = 0                  !< mass prior dN/dM ~ M^-imf_alpha
     integer(c_int32_t) :: n_masses = 400, n_ages = 96 !< sampling
     real(c_double) :: reserved(4) = 0
  end type hrt_ms_options

  !> struct hrt_ms_value: weighted median, 15.87/84.13 % points, and the band's ends at the given value.
  type, bind(C), public :: hrt_ms_value
     real(c_double) :: median, lo, hi, band_lo, band_hi
  end type hrt_ms_value

  !> struct hrt_ms_estimate: the main-sequence star(s) of a given Teff or L.
  type, bind(C), public :: hrt_ms_estimate
     integer(c_int32_t) :: status, n_models
     real(c_double) :: z
     type(hrt_ms_value) :: log_l_lsun, log_teff_k, log_r_rsun, log_g_cgs, mass_msun, initial_mass_msun, age_yr
     real(c_double) :: reserved(4)
  end type hrt_ms_estimate

  !> struct hrt_ms_distance_result: a distance from the main sequence and a bolometric flux.
  type, bind(C), public :: hrt_ms_distance_result
     integer(c_int32_t) :: status, n_models
     type(hrt_fit_interval) :: distance_pc, parallax_mas
     real(c_double) :: reserved(4)
  end type hrt_ms_distance_result

  ! ------------------------------------------------------------ importing text tracks
  !> struct hrt_import_track_report: what an import did with one track file (hrtf_import_report).
  type, bind(C), public :: hrt_import_track_report
     type(c_ptr) :: file = c_null_ptr                !< const char *: path as added (hrtf_string)
     integer(c_int) :: status = 0                    !< HRT_OK: in the grid; else the reason's code
     integer(c_long) :: line = 0, column = 0         !< where the problem is (1-based; 0 if none)
     character(kind=c_char) :: message(320)          !< the problem (hrtf_chars), or ""
     character(kind=c_char) :: notes(320)            !< what was assumed or changed
     real(c_double) :: initial_mass_msun = 0         !< NaN if unknown
     real(c_double) :: z = 0                         !< NaN if unknown
     integer(c_int) :: route = -1                    !< route index, -1 if none
     integer(c_int) :: truncated = 0                 !< 1: stops before its route's last keypoint
     integer(c_int) :: remnant = 0                   !< HRT_REMNANT_* assigned
     real(c_double) :: remnant_mass_msun = 0         !< NaN if none
     integer(c_size_t) :: n_rows = 0                 !< data rows read
     integer(c_size_t) :: n_rows_dropped = 0         !< rows dropped in lenient mode
     integer(c_size_t) :: n_keypoints = 0            !< keypoints reached on the route
     real(c_double) :: keypoint_age_yr(HRT_IMPORT_MAX_KP) = 0 !< age of each, yr
     integer(c_long) :: keypoint_line(HRT_IMPORT_MAX_KP) = 0  !< file line of each
     integer(c_int) :: keypoint_how(HRT_IMPORT_MAX_KP) = 0    !< how each was found (HRT_KP_FOUND_* in C)
     character(kind=c_char) :: missing(192)          !< why the next keypoint was not found
  end type hrt_import_track_report

  !> struct hrt_import_row_report: a data row dropped in lenient mode.
  type, bind(C), public :: hrt_import_row_report
     integer(c_long) :: line = 0, column = 0         !< where in the file (1-based)
     integer(c_int) :: code = 0                      !< status code of the problem
     character(kind=c_char) :: message(320)          !< "file:line:column: problem"
  end type hrt_import_row_report

  !> An import being set up, run, and its report (idiomatic layer).
  type, public :: hrt_import_t
     type(c_ptr) :: ptr = c_null_ptr
  end type hrt_import_t

  !> A fitting lattice (idiomatic layer); the grid must outlive it.  Copies share it: free once.
  type, public :: hrt_fit_model_t
     type(c_ptr) :: ptr = c_null_ptr
  end type hrt_fit_model_t

  !> struct hrt_accuracy_row: leave-one-out errors of one type, route and phase (hrtf_accuracy).
  !> Quantities (index 1..3): |d log L|, |d log Teff|, |d log age|, dex.
  integer, parameter, public :: HRT_ACCURACY_NQ = 3
  type, bind(C), public :: hrt_accuracy_row
     integer(c_int) :: interp                       !< HRT_INTERP_* of the rebuilt grids
     integer(c_int) :: route                        !< route index in the grid
     integer(c_int) :: phase                        !< HRT_PHASE_* of the dropped track's EEPs
     integer(c_size_t) :: n_points                  !< EEPs compared
     integer(c_size_t) :: n_tracks                  !< dropped tracks with EEPs in this phase
     real(c_double) :: median(HRT_ACCURACY_NQ)      !< median |error|, dex
     real(c_double) :: p95(HRT_ACCURACY_NQ)         !< 95th percentile of |error| (nearest rank), dex
     real(c_double) :: max(HRT_ACCURACY_NQ)         !< largest |error|, dex
     real(c_double) :: worst_mass_msun(HRT_ACCURACY_NQ) !< initial mass of the worst track, Msun
     real(c_double) :: worst_z(HRT_ACCURACY_NQ)     !< its metal mass fraction
     integer(c_size_t) :: worst_eep(HRT_ACCURACY_NQ) !< its EEP index (from 0)
     real(c_double) :: wd_mass_max_msun             !< route's largest white-dwarf mass error, Msun (NaN if none)
  end type hrt_accuracy_row

  !> struct hrt_interp_error: estimated interpolation error of a state (hrtf_interp_error), dex.
  type, bind(C), public :: hrt_interp_error
     real(c_double) :: log_l_dex                    !< |error| of log L at the state's EEP
     real(c_double) :: log_teff_dex                 !< |error| of log Teff
     real(c_double) :: log_age_dex                  !< |error| of log age
     integer(c_int32_t) :: n_tracks                 !< measured tracks the estimate comes from
     real(c_double) :: reserved(4)                  !< zero
  end type hrt_interp_error

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
       hrt_phase_code, hrt_remnant_name, hrt_remnant_key, hrt_remnant_code, hrt_grid_open_with, hrt_grid_open, &
       hrt_grid_close, hrt_default_grid_path, hrt_grid_n_z, hrt_grid_z, hrt_grid_z_ref, &
       hrt_grid_mass_range, hrt_grid_z_range, hrt_grid_n_routes, hrt_grid_route_name, hrt_grid_upgrade, &
       hrt_eval, hrt_star_new, hrt_star_free, hrt_star_at, hrt_star_n_eep, hrt_star_eep_state, &
       hrt_star_route, hrt_star_end_age, hrt_star_remnant, hrt_star_phases, hrt_isochrone, &
       hrt_phase_from_key, hrt_remnant_from_key, hrt_interp_name, hrt_interp_from_name, hrt_grid_interp, &
       hrt_grid_n_masses, hrt_grid_mass, hrt_grid_track_route, hrt_grid_track_n_eep, hrt_grid_route_n_eep, &
       hrt_grid_route_n_keypoints, hrt_grid_keypoint_name, hrt_grid_keypoint_eep, hrt_grid_route_boundary, &
       hrt_grid_attribute, hrt_grid_memory_bytes, hrt_grid_route_of, hrt_grid_boundary_at, hrt_star_mass, &
       hrt_star_z, hrt_star_n_keypoints, hrt_star_keypoint_name, hrt_star_keypoint_age, &
       hrt_isochrone_options_default, hrt_isochrone_with, hrt_wd_radius_rsun, hrt_wd_log_l, &
       hrt_collapse_remnant, hrt_default_route, hrt_bc_v, hrt_magnitudes, hrt_remap, hrt_step
  public :: hrt_grid_extra_count, hrt_grid_extra_name, hrt_grid_extra_unit, hrt_grid_extra_meaning, &
       hrt_grid_extra_index, hrt_state_extra, hrt_extra_at
  public :: hrt_imf_name, hrt_imf_from_name, hrt_imf_init, hrt_imf_pdf, hrt_imf_cdf, hrt_imf_quantile, &
       hrt_imf_mean_mass, hrt_sfh_name, hrt_sfh_from_name, hrt_pop_spec_default, hrt_pop_spec_check, &
       hrt_pop_n_chunks, hrt_pop_draw, hrt_pop_sum_value, hrt_pop_summary_init, hrt_pop_summary_add, &
       hrt_pop_summary_add_unborn, hrt_pop_summary_merge, hrt_pop_turnoff_mass, hrt_pop_max_threads, &
       hrt_eval_parallel, hrt_pop_run
  public :: hrt_pop_part_new, hrt_pop_part_free, hrt_pop_part_run, hrt_pop_part_add, hrt_pop_part_merge, &
       hrt_pop_part_spec, hrt_pop_part_n_ages, hrt_pop_part_summary, hrt_pop_part_note, hrt_pop_part_n_ranges, &
       hrt_pop_part_range, hrt_pop_part_chunks_done, hrt_pop_part_complete, hrt_pop_part_save, hrt_pop_part_load, &
       hrt_pop_catalogue_open, hrt_pop_catalogue_add, hrt_pop_catalogue_close
  public :: hrt_fit_mass_prior_name, hrt_fit_mass_prior_from_name, hrt_fit_model_options_default, &
       hrt_fit_model_new, hrt_fit_model_free, hrt_fit_model_memory_bytes, hrt_fit_model_get_options, &
       hrt_fit_model_n_feh, hrt_fit_model_feh, hrt_fit_obs_init, hrt_fit_star, hrt_fit_distance_m, &
       hrt_fit_flux_from_mbol, hrt_forecast
  public :: hrt_ms_options_default, hrt_ms_new, hrt_ms_free, hrt_ms_teff_range, hrt_ms_log_l_range, &
       hrt_ms_from_teff, hrt_ms_from_log_l, hrt_ms_distance
  public :: hrt_import_new, hrt_import_free, hrt_import_map, hrt_import_map_file, hrt_import_set_routes, &
       hrt_import_set_z_ref, hrt_import_set_lenient, hrt_import_set_force, hrt_import_set_pre_ms, &
       hrt_import_set_route_boundaries, &
       hrt_import_set_progress, hrt_import_add_file, hrt_import_run, hrt_import_n_tracks, hrt_import_track, &
       hrt_import_dropped_row, hrt_import_n_routes, hrt_import_route_name, hrt_import_route_n_keypoints, &
       hrt_import_keypoint_name, hrt_import_n_z, hrt_import_z, hrt_import_route_boundary
  public :: hrt_accuracy_new, hrt_accuracy_free, hrt_accuracy_set_interp, hrt_accuracy_set_threads, &
       hrt_accuracy_set_z, hrt_accuracy_set_across_z, hrt_accuracy_run, hrt_accuracy_n_rows, &
       hrt_accuracy_row_at, hrt_accuracy_store, &
       hrt_state_interp_error, hrt_grid_has_interp_error
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
     !> hrt_grid_open_with(path, HRT_INTERP_STEFFEN, grid, err).
     function hrt_grid_open(path, grid, err) bind(C, name="hrt_grid_open") result(rc)
       import :: c_int, c_ptr, hrt_error
       type(c_ptr), value :: path
       type(c_ptr), intent(out) :: grid
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_grid_open
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
     ! ---- names and codes
     function hrt_phase_from_key(key) bind(C, name="hrt_phase_from_key") result(code)
       import :: c_char, c_int
       character(kind=c_char), intent(in) :: key(*)
       integer(c_int) :: code
     end function hrt_phase_from_key
     function hrt_remnant_from_key(key) bind(C, name="hrt_remnant_from_key") result(code)
       import :: c_char, c_int
       character(kind=c_char), intent(in) :: key(*)
       integer(c_int) :: code
     end function hrt_remnant_from_key
     function hrt_interp_name(interp) bind(C, name="hrt_interp_name") result(p)
       import :: c_int, c_ptr
       integer(c_int), value :: interp
       type(c_ptr) :: p
     end function hrt_interp_name
     function hrt_interp_from_name(name) bind(C, name="hrt_interp_from_name") result(code)
       import :: c_char, c_int
       character(kind=c_char), intent(in) :: name(*)
       integer(c_int) :: code
     end function hrt_interp_from_name
     ! ---- the grid's layout
     function hrt_grid_interp(grid) bind(C, name="hrt_grid_interp") result(r)
       import :: c_ptr, c_int
       type(c_ptr), value :: grid
       integer(c_int) :: r
     end function hrt_grid_interp
     function hrt_grid_n_masses(grid, iz) bind(C, name="hrt_grid_n_masses") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t), value :: iz
       integer(c_size_t) :: n
     end function hrt_grid_n_masses
     function hrt_grid_mass(grid, iz, im) bind(C, name="hrt_grid_mass") result(m)
       import :: c_ptr, c_size_t, c_double
       type(c_ptr), value :: grid
       integer(c_size_t), value :: iz, im
       real(c_double) :: m
     end function hrt_grid_mass
     function hrt_grid_track_route(grid, iz, im) bind(C, name="hrt_grid_track_route") result(r)
       import :: c_ptr, c_size_t, c_int
       type(c_ptr), value :: grid
       integer(c_size_t), value :: iz, im
       integer(c_int) :: r
     end function hrt_grid_track_route
     function hrt_grid_track_n_eep(grid, iz, im) bind(C, name="hrt_grid_track_n_eep") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t), value :: iz, im
       integer(c_size_t) :: n
     end function hrt_grid_track_n_eep
     function hrt_grid_route_n_eep(grid, r) bind(C, name="hrt_grid_route_n_eep") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t), value :: r
       integer(c_size_t) :: n
     end function hrt_grid_route_n_eep
     function hrt_grid_route_n_keypoints(grid, r) bind(C, name="hrt_grid_route_n_keypoints") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t), value :: r
       integer(c_size_t) :: n
     end function hrt_grid_route_n_keypoints
     function hrt_grid_keypoint_name(grid, r, k) bind(C, name="hrt_grid_keypoint_name") result(p)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t), value :: r, k
       type(c_ptr) :: p
     end function hrt_grid_keypoint_name
     function hrt_grid_keypoint_eep(grid, r, k) bind(C, name="hrt_grid_keypoint_eep") result(j)
       import :: c_ptr, c_size_t, c_long
       type(c_ptr), value :: grid
       integer(c_size_t), value :: r, k
       integer(c_long) :: j
     end function hrt_grid_keypoint_eep
     function hrt_grid_route_boundary(grid, iz, b) bind(C, name="hrt_grid_route_boundary") result(m)
       import :: c_ptr, c_size_t, c_double
       type(c_ptr), value :: grid
       integer(c_size_t), value :: iz, b
       real(c_double) :: m
     end function hrt_grid_route_boundary
     !> name: NUL-terminated.  Result: a C string owned by the grid, or c_null_ptr.
     function hrt_grid_attribute(grid, name) bind(C, name="hrt_grid_attribute") result(p)
       import :: c_ptr, c_char
       type(c_ptr), value :: grid
       character(kind=c_char), intent(in) :: name(*)
       type(c_ptr) :: p
     end function hrt_grid_attribute
     function hrt_grid_memory_bytes(grid) bind(C, name="hrt_grid_memory_bytes") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t) :: n
     end function hrt_grid_memory_bytes
     function hrt_grid_route_of(grid, mass_msun, z, route) bind(C, name="hrt_grid_route_of") result(rc)
       import :: c_ptr, c_double, c_int
       type(c_ptr), value :: grid
       real(c_double), value :: mass_msun, z
       integer(c_int), intent(out) :: route
       integer(c_int) :: rc
     end function hrt_grid_route_of
     function hrt_grid_boundary_at(grid, z, b, mass_msun) bind(C, name="hrt_grid_boundary_at") result(rc)
       import :: c_ptr, c_double, c_size_t, c_int
       type(c_ptr), value :: grid
       real(c_double), value :: z
       integer(c_size_t), value :: b
       real(c_double), intent(out) :: mass_msun
       integer(c_int) :: rc
     end function hrt_grid_boundary_at
     ! ---- stars: keypoints
     function hrt_star_mass(star) bind(C, name="hrt_star_mass") result(m)
       import :: c_ptr, c_double
       type(c_ptr), value :: star
       real(c_double) :: m
     end function hrt_star_mass
     function hrt_star_z(star) bind(C, name="hrt_star_z") result(z)
       import :: c_ptr, c_double
       type(c_ptr), value :: star
       real(c_double) :: z
     end function hrt_star_z
     function hrt_star_n_keypoints(star) bind(C, name="hrt_star_n_keypoints") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: star
       integer(c_size_t) :: n
     end function hrt_star_n_keypoints
     function hrt_star_keypoint_name(star, k) bind(C, name="hrt_star_keypoint_name") result(p)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: star
       integer(c_size_t), value :: k
       type(c_ptr) :: p
     end function hrt_star_keypoint_name
     function hrt_star_keypoint_age(star, k, age_yr) bind(C, name="hrt_star_keypoint_age") result(rc)
       import :: c_ptr, c_size_t, c_double, c_int
       type(c_ptr), value :: star
       integer(c_size_t), value :: k
       real(c_double), intent(out) :: age_yr
       integer(c_int) :: rc
     end function hrt_star_keypoint_age
     ! ---- isochrones with options
     subroutine hrt_isochrone_options_default(o) bind(C, name="hrt_isochrone_options_default")
       import :: hrt_isochrone_options
       type(hrt_isochrone_options), intent(out) :: o
     end subroutine hrt_isochrone_options_default
     !> o: address of an hrt_isochrone_options or c_null_ptr (defaults); out: address of cap states.
     function hrt_isochrone_with(grid, age_yr, z, o, out, cap, n, err) bind(C, name="hrt_isochrone_with") result(rc)
       import :: c_ptr, c_double, c_size_t, c_int, hrt_error
       type(c_ptr), value :: grid
       real(c_double), value :: age_yr, z
       type(c_ptr), value :: o
       type(c_ptr), value :: out
       integer(c_size_t), value :: cap
       integer(c_size_t), intent(out) :: n
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_isochrone_with
     ! ---- remnant physics
     function hrt_wd_radius_rsun(mass_msun) bind(C, name="hrt_wd_radius_rsun") result(r)
       import :: c_double
       real(c_double), value :: mass_msun
       real(c_double) :: r
     end function hrt_wd_radius_rsun
     function hrt_wd_log_l(mass_msun, kind, log_l0, dt_yr) bind(C, name="hrt_wd_log_l") result(l)
       import :: c_double, c_int
       real(c_double), value :: mass_msun
       integer(c_int), value :: kind
       real(c_double), value :: log_l0, dt_yr
       real(c_double) :: l
     end function hrt_wd_log_l
     function hrt_collapse_remnant(co_core_mass_msun, final_mass_msun, kind, mass_msun) &
          bind(C, name="hrt_collapse_remnant") result(rc)
       import :: c_double, c_int
       real(c_double), value :: co_core_mass_msun, final_mass_msun
       integer(c_int), intent(out) :: kind
       real(c_double), intent(out) :: mass_msun
       integer(c_int) :: rc
     end function hrt_collapse_remnant
     ! ---- magnitudes
     function hrt_bc_v(log_teff_k) bind(C, name="hrt_bc_v") result(bc)
       import :: c_double
       real(c_double), value :: log_teff_k
       real(c_double) :: bc
     end function hrt_bc_v
     !> abs_mbol, bc_v, abs_mv, mv (n doubles each) and flags (n int32): c_loc of an array, or c_null_ptr.
     function hrt_magnitudes(n, states, distance_pc, a_v_mag, abs_mbol, bc_v, abs_mv, mv, flags, err) &
          bind(C, name="hrt_magnitudes") result(rc)
       import :: c_size_t, c_double, c_ptr, c_int, hrt_state, hrt_error
       integer(c_size_t), value :: n
       type(hrt_state), intent(in) :: states(*)
       real(c_double), value :: distance_pc, a_v_mag
       type(c_ptr), value :: abs_mbol, bc_v, abs_mv, mv, flags
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_magnitudes
     ! ---- stars whose mass changes
     function hrt_remap(grid, now, new_mass_msun, out, err) bind(C, name="hrt_remap") result(rc)
       import :: c_ptr, c_double, c_int, hrt_state, hrt_error
       type(c_ptr), value :: grid
       type(hrt_state), intent(in) :: now
       real(c_double), value :: new_mass_msun
       type(hrt_state), intent(out) :: out
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_remap
     !> dt_next_yr: the largest next step, yr (the C function also accepts NULL; here always given).
     function hrt_step(grid, now, dt_yr, mdot_msun_yr, next, dt_next_yr, err) bind(C, name="hrt_step") result(rc)
       import :: c_ptr, c_double, c_int, hrt_state, hrt_error
       type(c_ptr), value :: grid
       type(hrt_state), intent(in) :: now
       real(c_double), value :: dt_yr, mdot_msun_yr
       type(hrt_state), intent(out) :: next
       real(c_double), intent(out) :: dt_next_yr
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_step
     ! ---- extra quantities of a grid
     function hrt_grid_extra_count(grid) bind(C, name="hrt_grid_extra_count") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t) :: n
     end function hrt_grid_extra_count
     !> Result: a C string owned by the grid, or c_null_ptr (k out of range).
     function hrt_grid_extra_name(grid, k) bind(C, name="hrt_grid_extra_name") result(p)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t), value :: k
       type(c_ptr) :: p
     end function hrt_grid_extra_name
     function hrt_grid_extra_unit(grid, k) bind(C, name="hrt_grid_extra_unit") result(p)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t), value :: k
       type(c_ptr) :: p
     end function hrt_grid_extra_unit
     function hrt_grid_extra_meaning(grid, k) bind(C, name="hrt_grid_extra_meaning") result(p)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: grid
       integer(c_size_t), value :: k
       type(c_ptr) :: p
     end function hrt_grid_extra_meaning
     !> name: NUL-terminated.  Result: the 0-based index, -1 if the grid has no such quantity.
     function hrt_grid_extra_index(grid, name) bind(C, name="hrt_grid_extra_index") result(k)
       import :: c_ptr, c_char, c_long
       type(c_ptr), value :: grid
       character(kind=c_char), intent(in) :: name(*)
       integer(c_long) :: k
     end function hrt_grid_extra_index
     !> idx: c_loc of n 0-based indices (integer(c_size_t)), or c_null_ptr for the first n.
     function hrt_state_extra(grid, state, n, idx, out, err) bind(C, name="hrt_state_extra") result(rc)
       import :: c_ptr, c_size_t, c_double, c_int, hrt_state, hrt_error
       type(c_ptr), value :: grid
       type(hrt_state), intent(in) :: state
       integer(c_size_t), value :: n
       type(c_ptr), value :: idx
       real(c_double), intent(out) :: out(*)
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_state_extra
     !> idx as for hrt_state_extra; state: c_loc of an hrt_state to receive the star's state, or c_null_ptr.
     function hrt_extra_at(grid, mass_msun, z, age_yr, n, idx, out, state, err) bind(C, name="hrt_extra_at") &
          result(rc)
       import :: c_ptr, c_size_t, c_double, c_int, hrt_error
       type(c_ptr), value :: grid
       real(c_double), value :: mass_msun, z, age_yr
       integer(c_size_t), value :: n
       type(c_ptr), value :: idx
       real(c_double), intent(out) :: out(*)
       type(c_ptr), value :: state
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_extra_at
     ! ---- the default grid's routes
     !> keypoint_names: address of HRT_IMPORT_MAX_KP pointers, filled by the call.
     function hrt_default_route(r, spec, keypoint_names) bind(C, name="hrt_default_route") result(rc)
       import :: c_size_t, c_int, c_ptr, hrt_route_spec
       integer(c_size_t), value :: r
       type(hrt_route_spec), intent(out) :: spec
       type(c_ptr), value :: keypoint_names
       integer(c_int) :: rc
     end function hrt_default_route
     ! ---- populations
     function hrt_imf_name(kind) bind(C, name="hrt_imf_name") result(p)
       import :: c_int, c_ptr
       integer(c_int), value :: kind
       type(c_ptr) :: p
     end function hrt_imf_name
     function hrt_imf_from_name(name) bind(C, name="hrt_imf_from_name") result(kind)
       import :: c_char, c_int
       character(kind=c_char), intent(in) :: name(*)
       integer(c_int) :: kind
     end function hrt_imf_from_name
     function hrt_imf_init(imf, kind, m_lo_msun, m_hi_msun, alpha, err) bind(C, name="hrt_imf_init") result(rc)
       import :: c_int, c_double, hrt_imf, hrt_error
       type(hrt_imf), intent(inout) :: imf
       integer(c_int), value :: kind
       real(c_double), value :: m_lo_msun, m_hi_msun, alpha
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_imf_init
     function hrt_imf_pdf(imf, m_msun) bind(C, name="hrt_imf_pdf") result(p)
       import :: c_double, hrt_imf
       type(hrt_imf), intent(in) :: imf
       real(c_double), value :: m_msun
       real(c_double) :: p
     end function hrt_imf_pdf
     function hrt_imf_cdf(imf, m_msun) bind(C, name="hrt_imf_cdf") result(p)
       import :: c_double, hrt_imf
       type(hrt_imf), intent(in) :: imf
       real(c_double), value :: m_msun
       real(c_double) :: p
     end function hrt_imf_cdf
     function hrt_imf_quantile(imf, u) bind(C, name="hrt_imf_quantile") result(m)
       import :: c_double, hrt_imf
       type(hrt_imf), intent(in) :: imf
       real(c_double), value :: u
       real(c_double) :: m
     end function hrt_imf_quantile
     function hrt_imf_mean_mass(imf) bind(C, name="hrt_imf_mean_mass") result(m)
       import :: c_double, hrt_imf
       type(hrt_imf), intent(in) :: imf
       real(c_double) :: m
     end function hrt_imf_mean_mass
     function hrt_sfh_name(kind) bind(C, name="hrt_sfh_name") result(p)
       import :: c_int, c_ptr
       integer(c_int), value :: kind
       type(c_ptr) :: p
     end function hrt_sfh_name
     function hrt_sfh_from_name(name) bind(C, name="hrt_sfh_from_name") result(kind)
       import :: c_char, c_int
       character(kind=c_char), intent(in) :: name(*)
       integer(c_int) :: kind
     end function hrt_sfh_from_name
     subroutine hrt_pop_spec_default(spec) bind(C, name="hrt_pop_spec_default")
       import :: hrt_pop_spec
       type(hrt_pop_spec), intent(inout) :: spec
     end subroutine hrt_pop_spec_default
     function hrt_pop_spec_check(spec, err) bind(C, name="hrt_pop_spec_check") result(rc)
       import :: c_int, hrt_pop_spec, hrt_error
       type(hrt_pop_spec), intent(in) :: spec
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_spec_check
     function hrt_pop_n_chunks(spec) bind(C, name="hrt_pop_n_chunks") result(n)
       import :: c_int64_t, hrt_pop_spec
       type(hrt_pop_spec), intent(in) :: spec
       integer(c_int64_t) :: n
     end function hrt_pop_n_chunks
     !> mass_msun, z, t_birth_yr: addresses of cap doubles each, or c_null_ptr.
     function hrt_pop_draw(spec, chunk, mass_msun, z, t_birth_yr, cap, n, err) bind(C, name="hrt_pop_draw") &
          result(rc)
       import :: c_int, c_int64_t, c_size_t, c_ptr, hrt_pop_spec, hrt_error
       type(hrt_pop_spec), intent(in) :: spec
       integer(c_int64_t), value :: chunk
       type(c_ptr), value :: mass_msun, z, t_birth_yr
       integer(c_size_t), value :: cap
       integer(c_size_t), intent(out) :: n
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_draw
     pure function hrt_pop_sum_value(s) bind(C, name="hrt_pop_sum_value") result(v)
       import :: c_double, hrt_pop_sum
       type(hrt_pop_sum), intent(in) :: s
       real(c_double) :: v
     end function hrt_pop_sum_value
     !> hr: address of an hrt_pop_hr or c_null_ptr (no histogram).
     function hrt_pop_summary_init(s, age_yr, hr, err) bind(C, name="hrt_pop_summary_init") result(rc)
       import :: c_int, c_double, c_ptr, hrt_pop_summary, hrt_error
       type(hrt_pop_summary), intent(inout) :: s
       real(c_double), value :: age_yr
       type(c_ptr), value :: hr
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_summary_init
     function hrt_pop_summary_add(s, states, n, err) bind(C, name="hrt_pop_summary_add") result(rc)
       import :: c_int, c_size_t, hrt_pop_summary, hrt_state, hrt_error
       type(hrt_pop_summary), intent(inout) :: s
       type(hrt_state), intent(in) :: states(*)
       integer(c_size_t), value :: n
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_summary_add
     subroutine hrt_pop_summary_add_unborn(s, n) bind(C, name="hrt_pop_summary_add_unborn")
       import :: c_int64_t, hrt_pop_summary
       type(hrt_pop_summary), intent(inout) :: s
       integer(c_int64_t), value :: n
     end subroutine hrt_pop_summary_add_unborn
     function hrt_pop_summary_merge(dst, src, err) bind(C, name="hrt_pop_summary_merge") result(rc)
       import :: c_int, hrt_pop_summary, hrt_error
       type(hrt_pop_summary), intent(inout) :: dst
       type(hrt_pop_summary), intent(in) :: src
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_summary_merge
     function hrt_pop_turnoff_mass(s) bind(C, name="hrt_pop_turnoff_mass") result(m)
       import :: c_double, hrt_pop_summary
       type(hrt_pop_summary), intent(in) :: s
       real(c_double) :: m
     end function hrt_pop_turnoff_mass
     function hrt_pop_max_threads() bind(C, name="hrt_pop_max_threads") result(n)
       import :: c_int
       integer(c_int) :: n
     end function hrt_pop_max_threads
     !> As hrt_eval on n_threads threads (0: hrt_pop_max_threads()), the same bits.
     function hrt_eval_parallel(grid, n, mass_msun, z, z_all, age_yr, out, n_threads, err) &
          bind(C, name="hrt_eval_parallel") result(rc)
       import :: c_ptr, c_size_t, c_double, c_int, hrt_state, hrt_error
       type(c_ptr), value :: grid
       integer(c_size_t), value :: n
       real(c_double), intent(in) :: mass_msun(*)
       type(c_ptr), value :: z
       real(c_double), value :: z_all
       real(c_double), intent(in) :: age_yr(*)
       type(hrt_state), intent(out) :: out(*)
       integer(c_int), value :: n_threads
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_eval_parallel
     function hrt_pop_run(grid, spec, chunk_first, n_chunk, n_threads, n_ages, sums, err) &
          bind(C, name="hrt_pop_run") result(rc)
       import :: c_ptr, c_int64_t, c_int, c_size_t, hrt_pop_spec, hrt_pop_summary, hrt_error
       type(c_ptr), value :: grid
       type(hrt_pop_spec), intent(in) :: spec
       integer(c_int64_t), value :: chunk_first, n_chunk
       integer(c_int), value :: n_threads
       integer(c_size_t), value :: n_ages
       type(hrt_pop_summary), intent(inout) :: sums(*)
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_run
     ! ---- parts of a population (opaque hrt_pop_part *) and catalogues (opaque hrt_pop_catalogue *)
     !> An empty part; hr may be c_null_ptr (no histogram); note NUL-terminated.
     function hrt_pop_part_new(spec, n_ages, ages_yr, hr, note, out, err) bind(C, name="hrt_pop_part_new") result(rc)
       import :: c_ptr, c_size_t, c_double, c_char, c_int, hrt_pop_spec, hrt_error
       type(hrt_pop_spec), intent(in) :: spec
       integer(c_size_t), value :: n_ages
       real(c_double), intent(in) :: ages_yr(*)
       type(c_ptr), value :: hr
       character(kind=c_char), intent(in) :: note(*)
       type(c_ptr), intent(out) :: out
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_part_new
     subroutine hrt_pop_part_free(p) bind(C, name="hrt_pop_part_free")
       import :: c_ptr
       type(c_ptr), value :: p
     end subroutine hrt_pop_part_free
     function hrt_pop_part_run(grid, p, chunk_first, n_chunk, n_threads, err) bind(C, name="hrt_pop_part_run") result(rc)
       import :: c_ptr, c_int64_t, c_int, hrt_error
       type(c_ptr), value :: grid, p
       integer(c_int64_t), value :: chunk_first, n_chunk
       integer(c_int), value :: n_threads
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_part_run
     function hrt_pop_part_add(p, chunk_first, n_chunk, sums, err) bind(C, name="hrt_pop_part_add") result(rc)
       import :: c_ptr, c_int64_t, c_int, hrt_pop_summary, hrt_error
       type(c_ptr), value :: p
       integer(c_int64_t), value :: chunk_first, n_chunk
       type(hrt_pop_summary), intent(in) :: sums(*)
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_part_add
     function hrt_pop_part_merge(dst, src, err) bind(C, name="hrt_pop_part_merge") result(rc)
       import :: c_ptr, c_int, hrt_error
       type(c_ptr), value :: dst, src
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_part_merge
     !> const hrt_pop_spec * of the part.
     function hrt_pop_part_spec(p) bind(C, name="hrt_pop_part_spec") result(s)
       import :: c_ptr
       type(c_ptr), value :: p
       type(c_ptr) :: s
     end function hrt_pop_part_spec
     function hrt_pop_part_n_ages(p) bind(C, name="hrt_pop_part_n_ages") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: p
       integer(c_size_t) :: n
     end function hrt_pop_part_n_ages
     !> const hrt_pop_summary * of epoch i (from 0); the epochs' summaries are contiguous.
     function hrt_pop_part_summary(p, i) bind(C, name="hrt_pop_part_summary") result(s)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: p
       integer(c_size_t), value :: i
       type(c_ptr) :: s
     end function hrt_pop_part_summary
     function hrt_pop_part_note(p) bind(C, name="hrt_pop_part_note") result(s)
       import :: c_ptr
       type(c_ptr), value :: p
       type(c_ptr) :: s
     end function hrt_pop_part_note
     function hrt_pop_part_n_ranges(p) bind(C, name="hrt_pop_part_n_ranges") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: p
       integer(c_size_t) :: n
     end function hrt_pop_part_n_ranges
     function hrt_pop_part_range(p, i, first, count) bind(C, name="hrt_pop_part_range") result(rc)
       import :: c_ptr, c_size_t, c_int64_t, c_int
       type(c_ptr), value :: p
       integer(c_size_t), value :: i
       integer(c_int64_t), intent(out) :: first, count
       integer(c_int) :: rc
     end function hrt_pop_part_range
     function hrt_pop_part_chunks_done(p) bind(C, name="hrt_pop_part_chunks_done") result(n)
       import :: c_ptr, c_int64_t
       type(c_ptr), value :: p
       integer(c_int64_t) :: n
     end function hrt_pop_part_chunks_done
     function hrt_pop_part_complete(p) bind(C, name="hrt_pop_part_complete") result(yes)
       import :: c_ptr, c_int
       type(c_ptr), value :: p
       integer(c_int) :: yes
     end function hrt_pop_part_complete
     !> buf: c_null_ptr with cap 0 to ask the size (HRT_E_BUFFER, len set).
     function hrt_pop_part_save(p, buf, cap, len, err) bind(C, name="hrt_pop_part_save") result(rc)
       import :: c_ptr, c_size_t, c_int, hrt_error
       type(c_ptr), value :: p, buf
       integer(c_size_t), value :: cap
       integer(c_size_t), intent(out) :: len
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_part_save
     function hrt_pop_part_load(buf, len, out, err) bind(C, name="hrt_pop_part_load") result(rc)
       import :: c_ptr, c_size_t, c_int, hrt_error
       type(c_ptr), value :: buf
       integer(c_size_t), value :: len
       type(c_ptr), intent(out) :: out
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_part_load
     function hrt_pop_catalogue_open(path, format, out, err) bind(C, name="hrt_pop_catalogue_open") result(rc)
       import :: c_ptr, c_char, c_int, hrt_error
       character(kind=c_char), intent(in) :: path(*)
       integer(c_int), value :: format
       type(c_ptr), intent(out) :: out
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_catalogue_open
     function hrt_pop_catalogue_add(c, population_age_yr, n, star, birth_yr, states, err) &
          bind(C, name="hrt_pop_catalogue_add") result(rc)
       import :: c_ptr, c_double, c_size_t, c_int64_t, c_int, hrt_state, hrt_error
       type(c_ptr), value :: c
       real(c_double), value :: population_age_yr
       integer(c_size_t), value :: n
       integer(c_int64_t), intent(in) :: star(*)
       real(c_double), intent(in) :: birth_yr(*)
       type(hrt_state), intent(in) :: states(*)
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_catalogue_add
     function hrt_pop_catalogue_close(c, rows, err) bind(C, name="hrt_pop_catalogue_close") result(rc)
       import :: c_ptr, c_int64_t, c_int, hrt_error
       type(c_ptr), value :: c
       integer(c_int64_t), intent(out) :: rows
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_pop_catalogue_close
     ! ---- fitting and forecasts
     function hrt_fit_mass_prior_name(prior) bind(C, name="hrt_fit_mass_prior_name") result(p)
       import :: c_int, c_ptr
       integer(c_int), value :: prior
       type(c_ptr) :: p
     end function hrt_fit_mass_prior_name
     function hrt_fit_mass_prior_from_name(name) bind(C, name="hrt_fit_mass_prior_from_name") result(prior)
       import :: c_char, c_int
       character(kind=c_char), intent(in) :: name(*)
       integer(c_int) :: prior
     end function hrt_fit_mass_prior_from_name
     subroutine hrt_fit_model_options_default(o) bind(C, name="hrt_fit_model_options_default")
       import :: hrt_fit_model_options
       type(hrt_fit_model_options), intent(out) :: o
     end subroutine hrt_fit_model_options_default
     !> o: address of an hrt_fit_model_options or c_null_ptr (defaults).
     function hrt_fit_model_new(grid, o, model, err) bind(C, name="hrt_fit_model_new") result(rc)
       import :: c_ptr, c_int, hrt_error
       type(c_ptr), value :: grid
       type(c_ptr), value :: o
       type(c_ptr), intent(out) :: model
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_fit_model_new
     subroutine hrt_fit_model_free(model) bind(C, name="hrt_fit_model_free")
       import :: c_ptr
       type(c_ptr), value :: model
     end subroutine hrt_fit_model_free
     function hrt_fit_model_memory_bytes(model) bind(C, name="hrt_fit_model_memory_bytes") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: model
       integer(c_size_t) :: n
     end function hrt_fit_model_memory_bytes
     function hrt_fit_model_get_options(model, o) bind(C, name="hrt_fit_model_get_options") result(rc)
       import :: c_ptr, c_int, hrt_fit_model_options
       type(c_ptr), value :: model
       type(hrt_fit_model_options), intent(out) :: o
       integer(c_int) :: rc
     end function hrt_fit_model_get_options
     function hrt_fit_model_n_feh(model) bind(C, name="hrt_fit_model_n_feh") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: model
       integer(c_size_t) :: n
     end function hrt_fit_model_n_feh
     function hrt_fit_model_feh(model, k) bind(C, name="hrt_fit_model_feh") result(feh)
       import :: c_ptr, c_size_t, c_double
       type(c_ptr), value :: model
       integer(c_size_t), value :: k
       real(c_double) :: feh
     end function hrt_fit_model_feh
     subroutine hrt_fit_obs_init(obs) bind(C, name="hrt_fit_obs_init")
       import :: hrt_fit_obs
       type(hrt_fit_obs), intent(out) :: obs
     end subroutine hrt_fit_obs_init
     !> samples: address of n_samples hrt_fit_sample, or c_null_ptr when n_samples is 0.
     function hrt_fit_star(model, obs, seed, n_samples, samples, res, err) bind(C, name="hrt_fit_star") result(rc)
       import :: c_ptr, c_int64_t, c_size_t, c_int, hrt_fit_obs, hrt_fit_result, hrt_error
       type(c_ptr), value :: model
       type(hrt_fit_obs), intent(in) :: obs
       integer(c_int64_t), value :: seed
       integer(c_size_t), value :: n_samples
       type(c_ptr), value :: samples
       type(hrt_fit_result), intent(inout) :: res
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_fit_star
     function hrt_fit_distance_m(l_w, flux_w_m2) bind(C, name="hrt_fit_distance_m") result(d)
       import :: c_double
       real(c_double), value :: l_w, flux_w_m2
       real(c_double) :: d
     end function hrt_fit_distance_m
     function hrt_fit_flux_from_mbol(mbol) bind(C, name="hrt_fit_flux_from_mbol") result(f)
       import :: c_double
       real(c_double), value :: mbol
       real(c_double) :: f
     end function hrt_fit_flux_from_mbol
     subroutine hrt_ms_options_default(o) bind(C, name="hrt_ms_options_default")
       import :: hrt_ms_options
       type(hrt_ms_options), intent(out) :: o
     end subroutine hrt_ms_options_default
     !> o: address of an hrt_ms_options, or c_null_ptr for the defaults.
     function hrt_ms_new(grid, z, o, ms, err) bind(C, name="hrt_ms_new") result(rc)
       import :: c_ptr, c_double, c_int, hrt_error
       type(c_ptr), value :: grid
       real(c_double), value :: z
       type(c_ptr), value :: o
       type(c_ptr), intent(out) :: ms
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_ms_new
     subroutine hrt_ms_free(ms) bind(C, name="hrt_ms_free")
       import :: c_ptr
       type(c_ptr), value :: ms
     end subroutine hrt_ms_free
     function hrt_ms_teff_range(ms, lo_k, hi_k) bind(C, name="hrt_ms_teff_range") result(rc)
       import :: c_ptr, c_double, c_int
       type(c_ptr), value :: ms
       real(c_double), intent(out) :: lo_k, hi_k
       integer(c_int) :: rc
     end function hrt_ms_teff_range
     function hrt_ms_log_l_range(ms, lo, hi) bind(C, name="hrt_ms_log_l_range") result(rc)
       import :: c_ptr, c_double, c_int
       type(c_ptr), value :: ms
       real(c_double), intent(out) :: lo, hi
       integer(c_int) :: rc
     end function hrt_ms_log_l_range
     function hrt_ms_from_teff(ms, teff_k, teff_k_sigma, out, err) bind(C, name="hrt_ms_from_teff") result(rc)
       import :: c_ptr, c_double, c_int, hrt_ms_estimate, hrt_error
       type(c_ptr), value :: ms
       real(c_double), value :: teff_k, teff_k_sigma
       type(hrt_ms_estimate), intent(inout) :: out
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_ms_from_teff
     function hrt_ms_from_log_l(ms, log_l_lsun, log_l_sigma, out, err) bind(C, name="hrt_ms_from_log_l") result(rc)
       import :: c_ptr, c_double, c_int, hrt_ms_estimate, hrt_error
       type(c_ptr), value :: ms
       real(c_double), value :: log_l_lsun, log_l_sigma
       type(hrt_ms_estimate), intent(inout) :: out
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_ms_from_log_l
     function hrt_ms_distance(ms, teff_k, teff_k_sigma, flux_w_m2, flux_sigma_w_m2, out, err) &
          bind(C, name="hrt_ms_distance") result(rc)
       import :: c_ptr, c_double, c_int, hrt_ms_distance_result, hrt_error
       type(c_ptr), value :: ms
       real(c_double), value :: teff_k, teff_k_sigma, flux_w_m2, flux_sigma_w_m2
       type(hrt_ms_distance_result), intent(inout) :: out
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_ms_distance
     !> dt_yr, states: addresses of n_times values, or c_null_ptr when n_times is 0.
     function hrt_forecast(grid, n, samples, n_times, dt_yr, states, res, err) bind(C, name="hrt_forecast") &
          result(rc)
       import :: c_ptr, c_size_t, c_int, hrt_fit_sample, hrt_forecast_result, hrt_error
       type(c_ptr), value :: grid
       integer(c_size_t), value :: n
       type(hrt_fit_sample), intent(in) :: samples(*)
       integer(c_size_t), value :: n_times
       type(c_ptr), value :: dt_yr, states
       type(hrt_forecast_result), intent(inout) :: res
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_forecast
     ! ---- importing text tracks
     function hrt_import_new(imp, err) bind(C, name="hrt_import_new") result(rc)
       import :: c_ptr, c_int, hrt_error
       type(c_ptr), intent(out) :: imp
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_import_new
     subroutine hrt_import_free(imp) bind(C, name="hrt_import_free")
       import :: c_ptr
       type(c_ptr), value :: imp
     end subroutine hrt_import_free
     function hrt_import_map(imp, entries, err) bind(C, name="hrt_import_map") result(rc)
       import :: c_ptr, c_char, c_int, hrt_error
       type(c_ptr), value :: imp
       character(kind=c_char), intent(in) :: entries(*)
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_import_map
     function hrt_import_map_file(imp, path, err) bind(C, name="hrt_import_map_file") result(rc)
       import :: c_ptr, c_char, c_int, hrt_error
       type(c_ptr), value :: imp
       character(kind=c_char), intent(in) :: path(*)
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_import_map_file
     function hrt_import_set_routes(imp, n_routes, routes, err) bind(C, name="hrt_import_set_routes") result(rc)
       import :: c_ptr, c_size_t, c_int, hrt_route_spec, hrt_error
       type(c_ptr), value :: imp
       integer(c_size_t), value :: n_routes
       type(hrt_route_spec), intent(in) :: routes(*)
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_import_set_routes
     function hrt_import_set_z_ref(imp, z_ref, err) bind(C, name="hrt_import_set_z_ref") result(rc)
       import :: c_ptr, c_double, c_int, hrt_error
       type(c_ptr), value :: imp
       real(c_double), value :: z_ref
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_import_set_z_ref
     function hrt_import_set_lenient(imp, on) bind(C, name="hrt_import_set_lenient") result(rc)
       import :: c_ptr, c_int
       type(c_ptr), value :: imp
       integer(c_int), value :: on
       integer(c_int) :: rc
     end function hrt_import_set_lenient
     function hrt_import_set_force(imp, on) bind(C, name="hrt_import_set_force") result(rc)
       import :: c_ptr, c_int
       type(c_ptr), value :: imp
       integer(c_int), value :: on
       integer(c_int) :: rc
     end function hrt_import_set_force
     function hrt_import_set_pre_ms(imp, on, err) bind(C, name="hrt_import_set_pre_ms") result(rc)
       import :: c_ptr, c_int, hrt_error
       type(c_ptr), value :: imp
       integer(c_int), value :: on
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_import_set_pre_ms
     function hrt_import_set_route_boundaries(imp, z, n, mass_msun, err) &
          bind(C, name="hrt_import_set_route_boundaries") result(rc)
       import :: c_ptr, c_double, c_size_t, c_int, hrt_error
       type(c_ptr), value :: imp
       real(c_double), value :: z
       integer(c_size_t), value :: n
       real(c_double), intent(in) :: mass_msun(*)
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_import_set_route_boundaries
     !> progress: a bind(C) procedure (c_funloc) taking (user, done, total, file) by value, or c_null_funptr.
     function hrt_import_set_progress(imp, progress, user) bind(C, name="hrt_import_set_progress") result(rc)
       import :: c_ptr, c_funptr, c_int
       type(c_ptr), value :: imp
       type(c_funptr), value :: progress
       type(c_ptr), value :: user
       integer(c_int) :: rc
     end function hrt_import_set_progress
     function hrt_import_add_file(imp, path, z, err) bind(C, name="hrt_import_add_file") result(rc)
       import :: c_ptr, c_char, c_double, c_int, hrt_error
       type(c_ptr), value :: imp
       character(kind=c_char), intent(in) :: path(*)
       real(c_double), value :: z
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_import_add_file
     !> out_path: NUL-terminated path of the grid to write, or c_null_ptr to check the files only.
     function hrt_import_run(imp, out_path, err) bind(C, name="hrt_import_run") result(rc)
       import :: c_ptr, c_int, hrt_error
       type(c_ptr), value :: imp
       type(c_ptr), value :: out_path
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_import_run
     function hrt_import_n_tracks(imp) bind(C, name="hrt_import_n_tracks") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: imp
       integer(c_size_t) :: n
     end function hrt_import_n_tracks
     function hrt_import_track(imp, i, out) bind(C, name="hrt_import_track") result(rc)
       import :: c_ptr, c_size_t, c_int, hrt_import_track_report
       type(c_ptr), value :: imp
       integer(c_size_t), value :: i
       type(hrt_import_track_report), intent(out) :: out
       integer(c_int) :: rc
     end function hrt_import_track
     function hrt_import_dropped_row(imp, i, k, out) bind(C, name="hrt_import_dropped_row") result(rc)
       import :: c_ptr, c_size_t, c_int, hrt_import_row_report
       type(c_ptr), value :: imp
       integer(c_size_t), value :: i, k
       type(hrt_import_row_report), intent(out) :: out
       integer(c_int) :: rc
     end function hrt_import_dropped_row
     function hrt_import_n_routes(imp) bind(C, name="hrt_import_n_routes") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: imp
       integer(c_size_t) :: n
     end function hrt_import_n_routes
     function hrt_import_route_name(imp, r) bind(C, name="hrt_import_route_name") result(p)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: imp
       integer(c_size_t), value :: r
       type(c_ptr) :: p
     end function hrt_import_route_name
     function hrt_import_route_n_keypoints(imp, r) bind(C, name="hrt_import_route_n_keypoints") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: imp
       integer(c_size_t), value :: r
       integer(c_size_t) :: n
     end function hrt_import_route_n_keypoints
     function hrt_import_keypoint_name(imp, r, k) bind(C, name="hrt_import_keypoint_name") result(p)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: imp
       integer(c_size_t), value :: r, k
       type(c_ptr) :: p
     end function hrt_import_keypoint_name
     function hrt_import_n_z(imp) bind(C, name="hrt_import_n_z") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: imp
       integer(c_size_t) :: n
     end function hrt_import_n_z
     function hrt_import_z(imp, iz) bind(C, name="hrt_import_z") result(z)
       import :: c_ptr, c_size_t, c_double
       type(c_ptr), value :: imp
       integer(c_size_t), value :: iz
       real(c_double) :: z
     end function hrt_import_z
     function hrt_import_route_boundary(imp, iz, b) bind(C, name="hrt_import_route_boundary") result(m)
       import :: c_ptr, c_size_t, c_double
       type(c_ptr), value :: imp
       integer(c_size_t), value :: iz, b
       real(c_double) :: m
     end function hrt_import_route_boundary
     function hrt_accuracy_new(acc, err) bind(C, name="hrt_accuracy_new") result(rc)
       import :: c_ptr, c_int, hrt_error
       type(c_ptr), intent(out) :: acc
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_accuracy_new
     subroutine hrt_accuracy_free(acc) bind(C, name="hrt_accuracy_free")
       import :: c_ptr
       type(c_ptr), value :: acc
     end subroutine hrt_accuracy_free
     function hrt_accuracy_set_interp(acc, interp, err) bind(C, name="hrt_accuracy_set_interp") result(rc)
       import :: c_ptr, c_int, hrt_error
       type(c_ptr), value :: acc
       integer(c_int), value :: interp
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_accuracy_set_interp
     function hrt_accuracy_set_threads(acc, n, err) bind(C, name="hrt_accuracy_set_threads") result(rc)
       import :: c_ptr, c_int, hrt_error
       type(c_ptr), value :: acc
       integer(c_int), value :: n
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_accuracy_set_threads
     function hrt_accuracy_set_z(acc, z, err) bind(C, name="hrt_accuracy_set_z") result(rc)
       import :: c_ptr, c_int, c_double, hrt_error
       type(c_ptr), value :: acc
       real(c_double), value :: z
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_accuracy_set_z
     function hrt_accuracy_set_across_z(acc, on, err) bind(C, name="hrt_accuracy_set_across_z") result(rc)
       import :: c_ptr, c_int, hrt_error
       type(c_ptr), value :: acc
       integer(c_int), value :: on
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_accuracy_set_across_z
     function hrt_accuracy_run(acc, grid, err) bind(C, name="hrt_accuracy_run") result(rc)
       import :: c_ptr, c_int, hrt_error
       type(c_ptr), value :: acc, grid
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_accuracy_run
     function hrt_accuracy_n_rows(acc) bind(C, name="hrt_accuracy_n_rows") result(n)
       import :: c_ptr, c_size_t
       type(c_ptr), value :: acc
       integer(c_size_t) :: n
     end function hrt_accuracy_n_rows
     function hrt_accuracy_row_at(acc, i, out) bind(C, name="hrt_accuracy_row_at") result(rc)
       import :: c_ptr, c_int, c_size_t, hrt_accuracy_row
       type(c_ptr), value :: acc
       integer(c_size_t), value :: i
       type(hrt_accuracy_row), intent(out) :: out
       integer(c_int) :: rc
     end function hrt_accuracy_row_at
     function hrt_accuracy_store(acc, path, err) bind(C, name="hrt_accuracy_store") result(rc)
       import :: c_ptr, c_int, hrt_error
       type(c_ptr), value :: acc, path
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_accuracy_store
     function hrt_state_interp_error(grid, s, out, err) bind(C, name="hrt_state_interp_error") result(rc)
       import :: c_ptr, c_int, hrt_state, hrt_interp_error, hrt_error
       type(c_ptr), value :: grid
       type(hrt_state), intent(in) :: s
       type(hrt_interp_error), intent(out) :: out
       type(hrt_error), intent(inout) :: err
       integer(c_int) :: rc
     end function hrt_state_interp_error
     function hrt_grid_has_interp_error(grid) bind(C, name="hrt_grid_has_interp_error") result(r)
       import :: c_ptr, c_int
       type(c_ptr), value :: grid
       integer(c_int) :: r
     end function hrt_grid_has_interp_error
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
       hrtf_phase_name, hrtf_phase_key, hrtf_remnant_name, hrtf_strerror, hrtf_version, hrtf_string, &
       hrtf_phase_bit, hrtf_isochrone_options, hrtf_isochrone_with, hrtf_evaluate_parallel, &
       hrtf_default_route, hrtf_grid_attribute, hrtf_grid_extra_name, hrtf_route_of, &
       hrtf_grid_masses, hrtf_star_keypoints
  public :: hrtf_imf_init, hrtf_pop_spec_default, hrtf_sfh_burst, hrtf_sfh_span, hrtf_sfh_table, &
       hrtf_zdist_fixed, hrtf_zdist_spread, hrtf_pop_check, hrtf_pop_draw, hrtf_pop_summaries, hrtf_pop_run, &
       hrtf_pop_summary_add, hrtf_pop_summary_merge, hrtf_pop_sum_value, hrtf_imf_name, hrtf_sfh_name
  public :: hrtf_fit_model_options, hrtf_fit_model_new, hrtf_fit_model_free, hrtf_fit_model_feh, hrtf_fit_obs, &
       hrtf_fit_star, hrtf_forecast, hrtf_forecast_event_name, hrtf_fit_mass_prior_name
  public :: hrtf_import_new, hrtf_import_free, hrtf_import_map, hrtf_import_settings, hrtf_import_add_file, &
       hrtf_import_run, hrtf_import_report, hrtf_chars
  public :: hrtf_accuracy, hrtf_interp_error, hrtf_has_interp_error

  !> States of many stars in one hrt_eval call; z is one metallicity or one per star.
  interface hrtf_evaluate
     module procedure evaluate_z_all, evaluate_z_each
  end interface hrtf_evaluate
  !> hrtf_evaluate on n_threads threads (hrt_eval_parallel): the same bits for any thread count.
  interface hrtf_evaluate_parallel
     module procedure evaluate_z_all_parallel, evaluate_z_each_parallel
  end interface hrtf_evaluate_parallel

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

  subroutine evaluate_core(grid, mass_msun, age_yr, zp, z_all, states, stat, errmsg, n_threads)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: mass_msun(:), age_yr(:)
    type(c_ptr), intent(in) :: zp
    real(c_double), intent(in) :: z_all
    type(hrt_state), allocatable, intent(out) :: states(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    integer, intent(in), optional :: n_threads
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
    if (present(n_threads)) then
       rc = hrt_eval_parallel(grid%ptr, int(size(mass_msun), c_size_t), mass_msun, zp, z_all, age_yr, states, &
            int(n_threads, c_int), err)
    else
       rc = hrt_eval(grid%ptr, int(size(mass_msun), c_size_t), mass_msun, zp, z_all, age_yr, states, err)
    end if
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
    call evaluate_each_core(grid, mass_msun, age_yr, z, states, stat, errmsg)
  end subroutine evaluate_z_each

  !> hrtf_evaluate_parallel: hrtf_evaluate on n_threads threads (>= 1; 0: OpenMP's maximum) by
  !> hrt_eval_parallel, the same states, stat and message bit for bit whatever the thread count.
  subroutine evaluate_z_all_parallel(grid, mass_msun, age_yr, z, states, n_threads, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: mass_msun(:), age_yr(:)
    real(c_double), intent(in) :: z
    type(hrt_state), allocatable, intent(out) :: states(:)
    integer, intent(in) :: n_threads
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    call evaluate_core(grid, mass_msun, age_yr, c_null_ptr, z, states, stat, errmsg, n_threads)
  end subroutine evaluate_z_all_parallel

  subroutine evaluate_z_each_parallel(grid, mass_msun, age_yr, z, states, n_threads, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: mass_msun(:), age_yr(:)
    real(c_double), intent(in), contiguous, target :: z(:)
    type(hrt_state), allocatable, intent(out) :: states(:)
    integer, intent(in) :: n_threads
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    call evaluate_each_core(grid, mass_msun, age_yr, z, states, stat, errmsg, n_threads)
  end subroutine evaluate_z_each_parallel

  subroutine evaluate_each_core(grid, mass_msun, age_yr, z, states, stat, errmsg, n_threads)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: mass_msun(:), age_yr(:)
    real(c_double), intent(in), contiguous, target :: z(:)
    type(hrt_state), allocatable, intent(out) :: states(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    integer, intent(in), optional :: n_threads
    if (size(z) /= size(mass_msun)) then
       allocate (states(size(mass_msun)))
       call report(HRT_E_INVALID, 'hrtf_evaluate: z and mass_msun differ in size', stat, errmsg)
       return
    end if
    if (size(z) == 0) then
       call evaluate_core(grid, mass_msun, age_yr, c_null_ptr, 0.0_c_double, states, stat, errmsg, n_threads)
    else
       call evaluate_core(grid, mass_msun, age_yr, c_loc(z), 0.0_c_double, states, stat, errmsg, n_threads)
    end if
  end subroutine evaluate_each_core

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

  !> The isochrone at age_yr (yr) and metallicity z: states ordered by route, then initial mass.
  subroutine hrtf_isochrone(grid, age_yr, z, states, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: age_yr, z
    type(hrt_state), allocatable, target, intent(out) :: states(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    call isochrone_core(grid, age_yr, z, c_null_ptr, states, stat, errmsg)
  end subroutine hrtf_isochrone

  !> As hrtf_isochrone with options (hrtf_isochrone_options(), changed as needed) that choose
  !> the phases (a mask of hrtf_phase_bit) and the sampling (max_dlog_l).
  subroutine hrtf_isochrone_with(grid, age_yr, z, options, states, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: age_yr, z
    type(hrt_isochrone_options), intent(in), target :: options
    type(hrt_state), allocatable, target, intent(out) :: states(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    call isochrone_core(grid, age_yr, z, c_loc(options), states, stat, errmsg)
  end subroutine hrtf_isochrone_with

  subroutine isochrone_core(grid, age_yr, z, op, states, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: age_yr, z
    type(c_ptr), intent(in) :: op
    type(hrt_state), allocatable, target, intent(out) :: states(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer(c_size_t) :: n, cap
    integer :: rc
    n = 0
    err = blank_error()
    rc = hrt_isochrone_with(grid%ptr, age_yr, z, op, c_null_ptr, 0_c_size_t, n, err)
    if (rc == HRT_E_BUFFER .or. (rc == HRT_OK .and. n == 0)) then
       cap = n
       allocate (states(cap))
       if (cap > 0) then
          err = blank_error()
          rc = hrt_isochrone_with(grid%ptr, age_yr, z, op, c_loc(states), cap, n, err)
       end if
    else
       allocate (states(0))
    end if
    call report(rc, error_text(err), stat, errmsg)
  end subroutine isochrone_core

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

  ! ================================================================ isochrones with options, routes

  !> Bit of phase code p in a phase mask (HRT_PHASE_BIT): ior() them into hrt_isochrone_options%phases.
  elemental function hrtf_phase_bit(phase) result(bit)
    integer, intent(in) :: phase
    integer(c_int64_t) :: bit
    bit = ibset(0_c_int64_t, phase)
  end function hrtf_phase_bit

  !> The default isochrone options (every luminous, modelled phase; HRT_ISOCHRONE_MAX_DLOG_L).
  function hrtf_isochrone_options() result(o)
    type(hrt_isochrone_options) :: o
    call hrt_isochrone_options_default(o)
  end function hrtf_isochrone_options

  !> Route r (from 0, in order of increasing mass) of the default grid's layout: its name, keypoint
  !> names and the EEP count of each segment between them.  stat HRT_E_INVALID past the last route.
  subroutine hrtf_default_route(r, name, keypoint_names, segment_samples, stat, errmsg)
    integer, intent(in) :: r
    character(len=:), allocatable, intent(out) :: name
    character(len=:), allocatable, intent(out) :: keypoint_names(:)
    integer, allocatable, intent(out) :: segment_samples(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_route_spec) :: spec
    type(c_ptr), target :: names(HRT_IMPORT_MAX_KP)
    integer(c_int), pointer :: seg(:)
    integer :: rc, k, n, width
    character(len=80) :: msg
    names = c_null_ptr
    rc = -1
    if (r >= 0) rc = hrt_default_route(int(r, c_size_t), spec, c_loc(names))
    if (rc /= HRT_OK) then
       name = ''
       allocate (character(len=0) :: keypoint_names(0))
       allocate (segment_samples(0))
       write (msg, '(a,i0,a)') 'hrt_default_route: no route ', r, ' in the default layout'
       call report(HRT_E_INVALID, trim(msg), stat, errmsg)
       return
    end if
    name = hrtf_string(spec%name)
    n = int(spec%n_keypoints)
    width = 0
    do k = 1, n
       width = max(width, len(hrtf_string(names(k))))
    end do
    allocate (character(len=width) :: keypoint_names(n))
    do k = 1, n
       keypoint_names(k) = hrtf_string(names(k))
    end do
    call c_f_pointer(spec%segment_samples, seg, [n - 1])
    segment_samples = int(seg)
    call report(HRT_OK, '', stat, errmsg)
  end subroutine hrtf_default_route

  ! ================================================================ grid layout and stars' keypoints

  !> A root attribute of the grid file as text ("description", "source", ...); '' if absent.
  function hrtf_grid_attribute(grid, name) result(s)
    type(hrt_grid_t), intent(in) :: grid
    character(len=*), intent(in) :: name
    character(len=:), allocatable :: s
    s = hrtf_string(hrt_grid_attribute(grid%ptr, trim(name) // c_null_char))
  end function hrtf_grid_attribute

  !> Name of the grid's extra quantity k (0-based, tracks/FORMAT.md "Extra quantities"); '' if out of range.
  function hrtf_grid_extra_name(grid, k) result(s)
    type(hrt_grid_t), intent(in) :: grid
    integer, intent(in) :: k
    character(len=:), allocatable :: s
    s = hrtf_string(hrt_grid_extra_name(grid%ptr, int(k, c_size_t)))
  end function hrtf_grid_extra_name

  !> Route (0-based, as hrt_state%route) that a star of initial mass (Msun) and metallicity z follows.
  subroutine hrtf_route_of(grid, mass_msun, z, route, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    real(c_double), intent(in) :: mass_msun, z
    integer, intent(out) :: route
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    integer(c_int) :: r
    integer :: rc
    r = -1
    rc = hrt_grid_route_of(grid%ptr, mass_msun, z, r)
    route = r
    call report(rc, 'hrt_grid_route_of: ' // hrtf_string(hrt_strerror(int(rc, c_int))), stat, errmsg)
  end subroutine hrtf_route_of

  !> Initial masses (Msun) of the tracks of metallicity group iz (1-based, as in hrtf_z_values).
  function hrtf_grid_masses(grid, iz) result(m)
    type(hrt_grid_t), intent(in) :: grid
    integer, intent(in) :: iz
    real(c_double), allocatable :: m(:)
    integer(c_size_t) :: i, n
    n = 0
    if (iz >= 1) n = hrt_grid_n_masses(grid%ptr, int(iz - 1, c_size_t))
    allocate (m(n))
    do i = 1, n
       m(i) = hrt_grid_mass(grid%ptr, int(iz - 1, c_size_t), i - 1)
    end do
  end function hrtf_grid_masses

  !> The keypoints of the star's route: names and the ages (yr) at which the star reaches them
  !> (NaN for keypoints its track does not reach).
  subroutine hrtf_star_keypoints(star, names, ages_yr)
    type(hrt_star_t), intent(in) :: star
    character(len=:), allocatable, intent(out) :: names(:)
    real(c_double), allocatable, intent(out) :: ages_yr(:)
    integer(c_size_t) :: k, n
    integer :: rc, width
    n = hrt_star_n_keypoints(star%ptr)
    width = 0
    do k = 1, n
       width = max(width, len(hrtf_string(hrt_star_keypoint_name(star%ptr, k - 1))))
    end do
    allocate (character(len=width) :: names(n))
    allocate (ages_yr(n))
    do k = 1, n
       names(k) = hrtf_string(hrt_star_keypoint_name(star%ptr, k - 1))
       rc = hrt_star_keypoint_age(star%ptr, k - 1, ages_yr(k))
    end do
  end subroutine hrtf_star_keypoints

  ! ================================================================ populations

  !> Set up an IMF (HRT_IMF_*) between m_lo_msun and m_hi_msun; alpha: slope of HRT_IMF_POWER_LAW.
  subroutine hrtf_imf_init(imf, kind, m_lo_msun, m_hi_msun, alpha, stat, errmsg)
    type(hrt_imf), intent(out) :: imf
    integer, intent(in) :: kind
    real(c_double), intent(in) :: m_lo_msun, m_hi_msun
    real(c_double), intent(in), optional :: alpha
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    real(c_double) :: a
    integer :: rc
    a = 0
    if (present(alpha)) a = alpha
    err = blank_error()
    rc = hrt_imf_init(imf, int(kind, c_int), m_lo_msun, m_hi_msun, a, err)
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_imf_init

  !> The library's default population: Kroupa 2001 IMF over 0.08-100 Msun, a burst at t = 0, Z 0.014,
  !> n_stars 0, seed 1, chunk_size 65536.
  function hrtf_pop_spec_default() result(spec)
    type(hrt_pop_spec) :: spec
    call hrt_pop_spec_default(spec)
  end function hrtf_pop_spec_default

  !> Every star born at t_start_yr (yr since the population began).
  function hrtf_sfh_burst(t_start_yr) result(sfh)
    real(c_double), intent(in) :: t_start_yr
    type(hrt_sfh) :: sfh
    sfh%kind = HRT_SFH_BURST
    sfh%t_start_yr = t_start_yr
  end function hrtf_sfh_burst

  !> Constant rate over [t_start_yr, t_end_yr]; with tau_yr, a rate ~ exp(-(t - t_start_yr) / tau_yr).
  function hrtf_sfh_span(t_start_yr, t_end_yr, tau_yr) result(sfh)
    real(c_double), intent(in) :: t_start_yr, t_end_yr
    real(c_double), intent(in), optional :: tau_yr
    type(hrt_sfh) :: sfh
    sfh%kind = HRT_SFH_CONSTANT
    sfh%t_start_yr = t_start_yr
    sfh%t_end_yr = t_end_yr
    if (present(tau_yr)) then
       sfh%kind = HRT_SFH_EXPONENTIAL
       sfh%tau_yr = tau_yr
    end if
  end function hrtf_sfh_span

  !> A rate linear between the points (t_yr(i), rate(i)).  The SFH keeps the arrays' addresses:
  !> pass arrays declared TARGET (or POINTER) that live, unchanged, as long as the SFH is used.
  function hrtf_sfh_table(t_yr, rate) result(sfh)
    real(c_double), intent(in), target, contiguous :: t_yr(:), rate(:)
    type(hrt_sfh) :: sfh
    sfh%kind = HRT_SFH_TABLE
    sfh%n_table = int(min(size(t_yr), size(rate)), c_size_t)
    if (size(t_yr) > 0) sfh%table_t_yr = c_loc(t_yr)
    if (size(rate) > 0) sfh%table_rate = c_loc(rate)
  end function hrtf_sfh_table

  !> Every star of metallicity z.
  function hrtf_zdist_fixed(z) result(d)
    real(c_double), intent(in) :: z
    type(hrt_zdist) :: d
    d%kind = HRT_ZDIST_FIXED
    d%z = z
  end function hrtf_zdist_fixed

  !> log10 Z uniform in [log10 z_lo, log10 z_hi]; with z and sigma_dex, log10 Z normal about
  !> log10 z with that spread, truncated to [z_lo, z_hi].
  function hrtf_zdist_spread(z_lo, z_hi, z, sigma_dex) result(d)
    real(c_double), intent(in) :: z_lo, z_hi
    real(c_double), intent(in), optional :: z, sigma_dex
    type(hrt_zdist) :: d
    d%kind = HRT_ZDIST_LOG_UNIFORM
    d%z_lo = z_lo
    d%z_hi = z_hi
    if (present(z) .and. present(sigma_dex)) then
       d%kind = HRT_ZDIST_LOG_NORMAL
       d%z = z
       d%sigma_dex = sigma_dex
    end if
  end function hrtf_zdist_spread

  !> Check a specification (IMF set up, SFH and metallicity valid).
  subroutine hrtf_pop_check(spec, stat, errmsg)
    type(hrt_pop_spec), intent(in) :: spec
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer :: rc
    err = blank_error()
    rc = hrt_pop_spec_check(spec, err)
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_pop_check

  !> The stars of chunk (0-based, < hrt_pop_n_chunks(spec)): initial masses (Msun), metallicities
  !> and birth times (yr), exactly those hrtf_pop_run evaluates.
  subroutine hrtf_pop_draw(spec, chunk, mass_msun, z, t_birth_yr, stat, errmsg)
    type(hrt_pop_spec), intent(in) :: spec
    integer(c_int64_t), intent(in) :: chunk
    real(c_double), allocatable, target, intent(out) :: mass_msun(:), z(:), t_birth_yr(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer(c_size_t) :: n, cap
    integer :: rc
    n = 0
    err = blank_error()
    rc = hrt_pop_draw(spec, chunk, c_null_ptr, c_null_ptr, c_null_ptr, 0_c_size_t, n, err)
    if (rc == HRT_E_BUFFER .or. (rc == HRT_OK .and. n == 0)) then
       cap = n
       allocate (mass_msun(cap), z(cap), t_birth_yr(cap))
       if (cap > 0) then
          err = blank_error()
          rc = hrt_pop_draw(spec, chunk, c_loc(mass_msun), c_loc(z), c_loc(t_birth_yr), cap, n, err)
       end if
    else
       allocate (mass_msun(0), z(0), t_birth_yr(0))
    end if
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_pop_draw

  !> Empty summaries, one per epoch ages_yr(i) (the population's age, yr), with the histogram
  !> binning hr (none when absent).
  subroutine hrtf_pop_summaries(sums, ages_yr, hr, stat, errmsg)
    type(hrt_pop_summary), allocatable, intent(out) :: sums(:)
    real(c_double), intent(in) :: ages_yr(:)
    type(hrt_pop_hr), intent(in), target, optional :: hr
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    type(c_ptr) :: hp
    integer :: i, rc
    allocate (sums(size(ages_yr)))
    hp = c_null_ptr
    if (present(hr)) hp = c_loc(hr)
    rc = HRT_OK
    err = blank_error()
    do i = 1, size(ages_yr)
       rc = hrt_pop_summary_init(sums(i), ages_yr(i), hp, err)
       if (rc /= HRT_OK) exit
    end do
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_pop_summaries

  !> Draw, evaluate and add to sums (one per epoch, from hrtf_pop_summaries) the chunks
  !> [chunk_first, chunk_first + n_chunk) of the population (default: all of them) on n_threads
  !> threads (default 0: as many as OpenMP allows).  Any split of the chunks, merged with
  !> hrtf_pop_summary_merge, gives the same bits.  sums are unchanged on failure.
  subroutine hrtf_pop_run(grid, spec, sums, chunk_first, n_chunk, n_threads, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    type(hrt_pop_spec), intent(in) :: spec
    type(hrt_pop_summary), intent(inout) :: sums(:)
    integer(c_int64_t), intent(in), optional :: chunk_first, n_chunk
    integer, intent(in), optional :: n_threads
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer(c_int64_t) :: first, count
    integer :: threads, rc
    first = 0
    if (present(chunk_first)) first = chunk_first
    count = hrt_pop_n_chunks(spec)
    if (present(n_chunk)) count = n_chunk
    threads = 0
    if (present(n_threads)) threads = n_threads
    err = blank_error()
    rc = hrt_pop_run(grid%ptr, spec, first, count, int(threads, c_int), int(size(sums), c_size_t), sums, err)
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_pop_run

  !> Add evaluated states (from hrtf_evaluate or elsewhere) to a summary, each as one born star.
  subroutine hrtf_pop_summary_add(s, states, stat, errmsg)
    type(hrt_pop_summary), intent(inout) :: s
    type(hrt_state), intent(in) :: states(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer :: rc
    err = blank_error()
    rc = hrt_pop_summary_add(s, states, int(size(states), c_size_t), err)
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_pop_summary_add

  !> dst += src exactly (commutative and associative bit for bit); dst unchanged on failure.
  subroutine hrtf_pop_summary_merge(dst, src, stat, errmsg)
    type(hrt_pop_summary), intent(inout) :: dst
    type(hrt_pop_summary), intent(in) :: src
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer :: rc
    err = blank_error()
    rc = hrt_pop_summary_merge(dst, src, err)
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_pop_summary_merge

  !> Value of a fixed-point sum of a summary (Msun or Lsun), rounded once.
  elemental function hrtf_pop_sum_value(s) result(v)
    type(hrt_pop_sum), intent(in) :: s
    real(c_double) :: v
    v = hrt_pop_sum_value(s)
  end function hrtf_pop_sum_value

  !> Name of an IMF kind ("salpeter1955", "kroupa2001", ...).
  function hrtf_imf_name(kind) result(s)
    integer, intent(in) :: kind
    character(len=:), allocatable :: s
    s = hrtf_string(hrt_imf_name(int(kind, c_int)))
  end function hrtf_imf_name

  !> Name of an SFH kind ("burst", "constant", "exponential", "table").
  function hrtf_sfh_name(kind) result(s)
    integer, intent(in) :: kind
    character(len=:), allocatable :: s
    s = hrtf_string(hrt_sfh_name(int(kind, c_int)))
  end function hrtf_sfh_name

  ! ================================================================ fitting and forecasts

  !> The default priors and resolution of a fitting lattice.
  function hrtf_fit_model_options() result(o)
    type(hrt_fit_model_options) :: o
    call hrt_fit_model_options_default(o)
  end function hrtf_fit_model_options

  !> Prepare the fitting lattice of a grid (options: hrtf_fit_model_options(), changed as needed).
  subroutine hrtf_fit_model_new(model, grid, options, stat, errmsg)
    type(hrt_fit_model_t), intent(out) :: model
    type(hrt_grid_t), intent(in) :: grid
    type(hrt_fit_model_options), intent(in), target, optional :: options
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    type(c_ptr) :: op
    integer :: rc
    op = c_null_ptr
    if (present(options)) op = c_loc(options)
    err = blank_error()
    rc = hrt_fit_model_new(grid%ptr, op, model%ptr, err)
    if (rc /= HRT_OK) model%ptr = c_null_ptr
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_fit_model_new

  !> Free a model; a null model is allowed.
  subroutine hrtf_fit_model_free(model)
    type(hrt_fit_model_t), intent(inout) :: model
    call hrt_fit_model_free(model%ptr)
    model%ptr = c_null_ptr
  end subroutine hrtf_fit_model_free

  !> [Fe/H] (dex) of the model's nodes, ascending.
  function hrtf_fit_model_feh(model) result(feh)
    type(hrt_fit_model_t), intent(in) :: model
    real(c_double), allocatable :: feh(:)
    integer(c_size_t) :: k, n
    n = hrt_fit_model_n_feh(model%ptr)
    allocate (feh(n))
    do k = 1, n
       feh(k) = hrt_fit_model_feh(model%ptr, k - 1)
    end do
  end function hrtf_fit_model_feh

  !> An observation with nothing measured (every field NaN): set what was measured, with its sigma.
  function hrtf_fit_obs() result(obs)
    type(hrt_fit_obs) :: obs
    call hrt_fit_obs_init(obs)
  end function hrtf_fit_obs

  !> Posterior of one observed star; with n_samples (and samples), that many posterior draws for
  !> hrtf_forecast.  The same seed, model and obs give the same bits in any thread.
  subroutine hrtf_fit_star(model, obs, result, seed, n_samples, samples, stat, errmsg)
    type(hrt_fit_model_t), intent(in) :: model
    type(hrt_fit_obs), intent(in) :: obs
    type(hrt_fit_result), intent(out) :: result
    integer(c_int64_t), intent(in), optional :: seed
    integer, intent(in), optional :: n_samples
    type(hrt_fit_sample), allocatable, target, intent(out), optional :: samples(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer(c_int64_t) :: sd
    integer :: n, rc
    type(c_ptr) :: sp
    sd = 1
    if (present(seed)) sd = seed
    n = 0
    if (present(n_samples) .and. present(samples)) n = max(n_samples, 0)
    sp = c_null_ptr
    if (present(samples)) then
       allocate (samples(n))
       if (n > 0) sp = c_loc(samples)
    end if
    err = blank_error()
    rc = hrt_fit_star(model%ptr, obs, sd, int(n, c_size_t), sp, result, err)
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_fit_star

  !> Future of a star given as samples (one exact star, or the draws of hrtf_fit_star) at the
  !> times dt_yr (yr from now; states gets one per time, when present).
  subroutine hrtf_forecast(grid, samples, result, dt_yr, states, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    type(hrt_fit_sample), intent(in) :: samples(:)
    type(hrt_forecast_result), intent(out) :: result
    real(c_double), intent(in), target, contiguous, optional :: dt_yr(:)
    type(hrt_forecast_state), allocatable, target, intent(out), optional :: states(:)
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_forecast_state), allocatable, target :: scratch(:)
    type(hrt_error) :: err
    type(c_ptr) :: tp, sp
    integer :: n, rc
    n = 0
    if (present(dt_yr)) n = size(dt_yr)
    allocate (scratch(n))
    tp = c_null_ptr
    sp = c_null_ptr
    if (n > 0) then
       tp = c_loc(dt_yr)
       sp = c_loc(scratch)
    end if
    err = blank_error()
    rc = hrt_forecast(grid%ptr, int(size(samples), c_size_t), samples, int(n, c_size_t), tp, sp, result, err)
    if (present(states)) call move_alloc(scratch, states)
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_forecast

  !> Name of a forecast event (a keypoint of the grid's routes: "tams", "rgb_base", ...).
  function hrtf_forecast_event_name(event) result(s)
    type(hrt_forecast_event), intent(in) :: event
    character(len=:), allocatable :: s
    integer :: n
    n = 0
    do while (n < size(event%name))
       if (event%name(n + 1) == c_null_char) exit
       n = n + 1
    end do
    allocate (character(len=n) :: s)
    s = transfer(event%name(1:n), s)
  end function hrtf_forecast_event_name

  !> Name of a mass prior ("kroupa2001", "chabrier2003", "log-flat"); '' if unknown.
  function hrtf_fit_mass_prior_name(prior) result(s)
    integer, intent(in) :: prior
    character(len=:), allocatable :: s
    s = hrtf_string(hrt_fit_mass_prior_name(int(prior, c_int)))
  end function hrtf_fit_mass_prior_name

  ! ================================================================ importing text tracks

  !> Start an import with the default grid's routes and Z_ref 0.014.
  subroutine hrtf_import_new(imp, stat, errmsg)
    type(hrt_import_t), intent(out) :: imp
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer :: rc
    err = blank_error()
    rc = hrt_import_new(imp%ptr, err)
    if (rc /= HRT_OK) imp%ptr = c_null_ptr
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_import_new

  !> Free an import and its report; a null import is allowed.
  subroutine hrtf_import_free(imp)
    type(hrt_import_t), intent(inout) :: imp
    call hrt_import_free(imp%ptr)
    imp%ptr = c_null_ptr
  end subroutine hrtf_import_free

  !> Add "key=value" entries to the column map (include/hrtrail/build.h, hrt_import_map), or, with
  !> from_file = .true., the entries of the file named by entries.
  subroutine hrtf_import_map(imp, entries, from_file, stat, errmsg)
    type(hrt_import_t), intent(in) :: imp
    character(len=*), intent(in) :: entries
    logical, intent(in), optional :: from_file
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer :: rc
    logical :: file
    file = .false.
    if (present(from_file)) file = from_file
    err = blank_error()
    if (file) then
       rc = hrt_import_map_file(imp%ptr, trim(entries) // c_null_char, err)
    else
       rc = hrt_import_map(imp%ptr, entries // c_null_char, err)
    end if
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_import_map

  !> Settings of an import: Z_ref written to the grid, lenient (drop bad rows and files, and
  !> report them, instead of failing), force (write a grid even when its routes collapse),
  !> pre_ms (the tracks start on their birthline: the default layouts with their pre-main
  !> sequence; without it they start at the ZAMS).
  subroutine hrtf_import_settings(imp, z_ref, lenient, force, stat, errmsg, pre_ms)
    type(hrt_import_t), intent(in) :: imp
    real(c_double), intent(in), optional :: z_ref
    logical, intent(in), optional :: lenient, force, pre_ms
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer :: rc
    rc = HRT_OK
    err = blank_error()
    if (present(z_ref)) rc = hrt_import_set_z_ref(imp%ptr, z_ref, err)
    if (rc == HRT_OK .and. present(lenient)) rc = hrt_import_set_lenient(imp%ptr, merge(1_c_int, 0_c_int, lenient))
    if (rc == HRT_OK .and. present(force)) rc = hrt_import_set_force(imp%ptr, merge(1_c_int, 0_c_int, force))
    if (rc == HRT_OK .and. present(pre_ms)) rc = hrt_import_set_pre_ms(imp%ptr, merge(1_c_int, 0_c_int, pre_ms), err)
    if (rc /= HRT_OK .and. err%code == HRT_OK) then
       call report(rc, 'hrtf_import_settings: ' // hrtf_string(hrt_strerror(int(rc, c_int))), stat, errmsg)
    else
       call report(rc, error_text(err), stat, errmsg)
    end if
  end subroutine hrtf_import_settings

  !> Add a track file; z its metal mass fraction, or absent to take it from the map, the file-name
  !> pattern or a column.  Nothing is read yet.
  subroutine hrtf_import_add_file(imp, path, z, stat, errmsg)
    type(hrt_import_t), intent(in) :: imp
    character(len=*), intent(in) :: path
    real(c_double), intent(in), optional :: z
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    real(c_double) :: zz
    integer :: rc
    zz = ieee_value(0.0_c_double, ieee_quiet_nan)
    if (present(z)) zz = z
    err = blank_error()
    rc = hrt_import_add_file(imp%ptr, trim(path) // c_null_char, zz, err)
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_import_add_file

  !> Read every file, find keypoints and routes, resample and write the grid to out_path (absent:
  !> check the files only).  Each file's outcome: hrtf_import_report.
  subroutine hrtf_import_run(imp, out_path, stat, errmsg)
    type(hrt_import_t), intent(in) :: imp
    character(len=*), intent(in), optional :: out_path
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    character(kind=c_char, len=:), allocatable, target :: cpath
    type(hrt_error) :: err
    integer :: rc
    err = blank_error()
    if (present(out_path)) then
       cpath = trim(out_path) // c_null_char
       rc = hrt_import_run(imp%ptr, c_loc(cpath), err)
    else
       rc = hrt_import_run(imp%ptr, c_null_ptr, err)
    end if
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_import_run

  !> The report of every file added, in the order added.
  subroutine hrtf_import_report(imp, reports)
    type(hrt_import_t), intent(in) :: imp
    type(hrt_import_track_report), allocatable, intent(out) :: reports(:)
    integer(c_size_t) :: i, n
    integer :: rc
    n = hrt_import_n_tracks(imp%ptr)
    allocate (reports(n))
    do i = 1, n
       rc = hrt_import_track(imp%ptr, i - 1, reports(i))
    end do
  end subroutine hrtf_import_report

  !> Leave-one-out interpolation accuracy of a grid (hrt_accuracy_run): each interior track of
  !> each route dropped, its metallicity group rebuilt without it and the track interpolated
  !> from the rest; one row per interpolation type, route and phase.  interp: one HRT_INTERP_*
  !> (default: all four); threads: 0 (default) every core; z: one metallicity group only;
  !> store_path: write the run's error field into that grid file (hrt_accuracy_store: the
  !> grid's own file, which hrtf_interp_error then reads once reopened).
  subroutine hrtf_accuracy(grid, rows, interp, threads, z, store_path, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    type(hrt_accuracy_row), allocatable, intent(out) :: rows(:)
    integer, intent(in), optional :: interp, threads
    real(c_double), intent(in), optional :: z
    character(len=*), intent(in), optional :: store_path
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    character(kind=c_char, len=:), allocatable, target :: cpath
    type(c_ptr) :: acc
    type(hrt_error) :: err
    integer(c_size_t) :: i
    integer :: rc
    err = blank_error()
    allocate (rows(0))
    rc = hrt_accuracy_new(acc, err)
    if (rc == HRT_OK .and. present(interp)) rc = hrt_accuracy_set_interp(acc, int(interp, c_int), err)
    if (rc == HRT_OK .and. present(threads)) rc = hrt_accuracy_set_threads(acc, int(threads, c_int), err)
    if (rc == HRT_OK .and. present(z)) rc = hrt_accuracy_set_z(acc, z, err)
    if (rc == HRT_OK) rc = hrt_accuracy_run(acc, grid%ptr, err)
    if (rc == HRT_OK) then
       deallocate (rows)
       allocate (rows(hrt_accuracy_n_rows(acc)))
       do i = 1, size(rows, kind=c_size_t)
          rc = hrt_accuracy_row_at(acc, i - 1, rows(i))
       end do
    end if
    if (rc == HRT_OK .and. present(store_path)) then
       cpath = trim(store_path) // c_null_char
       rc = hrt_accuracy_store(acc, c_loc(cpath), err)
    end if
    call hrt_accuracy_free(acc)
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_accuracy

  !> Estimated interpolation error of a state of this grid (hrt_state_interp_error), from the
  !> leave-one-out field stored in the grid file: the largest |error| (dex, at the same EEP) of
  !> the two measured tracks either side of the state's mass, in its block of at most 10 EEPs,
  !> in the metallicity groups either side of its Z.  An upper estimate, not a 1-sigma error.
  !> NaN with stat = HRT_E_DOMAIN for remnants and failed states, HRT_E_INVALID without a field.
  subroutine hrtf_interp_error(grid, s, out, stat, errmsg)
    type(hrt_grid_t), intent(in) :: grid
    type(hrt_state), intent(in) :: s
    type(hrt_interp_error), intent(out) :: out
    integer, intent(out), optional :: stat
    character(len=*), intent(out), optional :: errmsg
    type(hrt_error) :: err
    integer :: rc
    err = blank_error()
    rc = hrt_state_interp_error(grid%ptr, s, out, err)
    call report(rc, error_text(err), stat, errmsg)
  end subroutine hrtf_interp_error

  !> .true. if the grid file stores an interpolation error field for the grid's type.
  logical function hrtf_has_interp_error(grid)
    type(hrt_grid_t), intent(in) :: grid
    hrtf_has_interp_error = hrt_grid_has_interp_error(grid%ptr) /= 0
  end function hrtf_has_interp_error

  !> Fortran text of a NUL-terminated character array of a struct (message, notes, missing, name).
  function hrtf_chars(chars) result(s)
    character(kind=c_char), intent(in) :: chars(:)
    character(len=:), allocatable :: s
    integer :: n
    n = 0
    do while (n < size(chars))
       if (chars(n + 1) == c_null_char) exit
       n = n + 1
    end do
    allocate (character(len=n) :: s)
    s = transfer(chars(1:n), s)
  end function hrtf_chars

end module hrtrail
