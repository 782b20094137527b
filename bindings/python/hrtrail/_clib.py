"""ctypes mirror of include/hrtrail.h and the loading of libhrtrail.

Everything that depends on the C ABI lives here: the structures (field for
field the C ones), the prototypes, the search for the shared library and the
ABI guard that refuses a library this package was not written for.
"""
import ctypes
import ctypes.util
import os

# The ABI this package was written for (HRT_ABI_VERSION of include/hrtrail.h).
# It is deliberately not generated from the build: when the header's ABI number
# changes, this file must be reviewed and the number changed by hand.
ABI_VERSION = 2

_DP = ctypes.POINTER(ctypes.c_double)


class HrtError(ctypes.Structure):
    """struct hrt_error: the code and a specific message."""
    _fields_ = [("code", ctypes.c_int), ("message", ctypes.c_char * 256)]


# Field names and C types of struct hrt_state, in declaration order.
STATE_FIELDS = [("struct_size", ctypes.c_uint32), ("status", ctypes.c_int32),
                ("phase", ctypes.c_int32), ("route", ctypes.c_int32),
                ("remnant", ctypes.c_int32), ("flags", ctypes.c_int32)] + \
    [(name, ctypes.c_double) for name in (
        "initial_mass_msun", "z", "age_yr", "log_l_lsun", "log_teff_k", "log_r_rsun", "log_g_cgs",
        "mass_msun", "he_core_mass_msun", "co_core_mass_msun", "eep", "phase_fraction",
        "phase_start_yr", "phase_end_yr", "remnant_mass_msun")] + \
    [("reserved", ctypes.c_double * 7)]


class HrtState(ctypes.Structure):
    """struct hrt_state, field for field (see State for the documented version)."""
    _fields_ = STATE_FIELDS


class HrtPhaseSpan(ctypes.Structure):
    """struct hrt_phase_span."""
    _fields_ = [("phase", ctypes.c_int32), ("reserved_", ctypes.c_int32),
                ("phase_start_yr", ctypes.c_double), ("phase_end_yr", ctypes.c_double)]


class HrtIsochroneOptions(ctypes.Structure):
    """struct hrt_isochrone_options."""
    _fields_ = [("phases", ctypes.c_uint64), ("max_dlog_l", ctypes.c_double), ("reserved", ctypes.c_double * 6)]


# ---- populations (include/hrtrail/population.h) ----
_SEG = 4  # HRT_IMF_MAX_SEGMENTS
PHASE_SLOTS = 64    # HRT_PHASE_SLOTS
REMNANT_SLOTS = 32  # HRT_REMNANT_SLOTS
POP_MAX_STATUS = 32  # HRT_POP_MAX_STATUS
POP_HR_MAX_BINS = 10000  # HRT_POP_HR_MAX_BINS


class HrtImf(ctypes.Structure):
    """struct hrt_imf."""
    _fields_ = [("kind", ctypes.c_int32), ("n_seg", ctypes.c_int32), ("m_lo_msun", ctypes.c_double),
                ("m_hi_msun", ctypes.c_double), ("alpha", ctypes.c_double),
                ("seg_lognormal", ctypes.c_int32 * _SEG)] + \
        [(n, ctypes.c_double * _SEG) for n in ("seg_lo", "seg_hi", "seg_a", "seg_s", "seg_amp", "seg_c0", "seg_c1")] + \
        [("seg_cum", ctypes.c_double * (_SEG + 1)), ("norm", ctypes.c_double)]


class HrtSfh(ctypes.Structure):
    """struct hrt_sfh."""
    _fields_ = [("kind", ctypes.c_int32), ("reserved_", ctypes.c_int32), ("t_start_yr", ctypes.c_double),
                ("t_end_yr", ctypes.c_double), ("tau_yr", ctypes.c_double), ("n_table", ctypes.c_size_t),
                ("table_t_yr", _DP), ("table_rate", _DP)]


class HrtZdist(ctypes.Structure):
    """struct hrt_zdist."""
    _fields_ = [("kind", ctypes.c_int32), ("reserved_", ctypes.c_int32), ("z", ctypes.c_double),
                ("z_lo", ctypes.c_double), ("z_hi", ctypes.c_double), ("sigma_dex", ctypes.c_double)]


class HrtPopSpec(ctypes.Structure):
    """struct hrt_pop_spec."""
    _fields_ = [("imf", HrtImf), ("sfh", HrtSfh), ("zdist", HrtZdist), ("n_stars", ctypes.c_uint64),
                ("seed", ctypes.c_uint64), ("chunk_size", ctypes.c_uint64)]


class HrtPopSum(ctypes.Structure):
    """struct hrt_pop_sum: (hi * 2^64 + lo) * 2^-32."""
    _fields_ = [("hi", ctypes.c_uint64), ("lo", ctypes.c_uint64)]


class HrtPopHr(ctypes.Structure):
    """struct hrt_pop_hr."""
    _fields_ = [("log_teff_k_lo", ctypes.c_double), ("log_teff_k_hi", ctypes.c_double),
                ("log_l_lsun_lo", ctypes.c_double), ("log_l_lsun_hi", ctypes.c_double),
                ("nx", ctypes.c_uint64), ("ny", ctypes.c_uint64)]


class HrtPopSummary(ctypes.Structure):
    """struct hrt_pop_summary."""
    _fields_ = [("struct_size", ctypes.c_uint64), ("age_yr", ctypes.c_double), ("n_drawn", ctypes.c_uint64),
                ("n_unborn", ctypes.c_uint64), ("n_evaluated", ctypes.c_uint64),
                ("n_status", ctypes.c_uint64 * POP_MAX_STATUS), ("failed_initial_mass_msun", HrtPopSum),
                ("n_phase", ctypes.c_uint64 * PHASE_SLOTS),
                ("phase_initial_mass_msun", HrtPopSum * PHASE_SLOTS), ("phase_mass_msun", HrtPopSum * PHASE_SLOTS),
                ("phase_l_lsun", HrtPopSum * PHASE_SLOTS), ("n_remnant", ctypes.c_uint64 * REMNANT_SLOTS),
                ("remnant_mass_msun", HrtPopSum * REMNANT_SLOTS), ("initial_mass_msun", HrtPopSum),
                ("mass_msun", HrtPopSum), ("l_lsun", HrtPopSum), ("ms_max_initial_mass_msun", ctypes.c_double),
                ("evolved_min_initial_mass_msun", ctypes.c_double), ("hr", HrtPopHr),
                ("hr_outside", ctypes.c_uint64), ("hr_count", ctypes.c_uint64 * POP_HR_MAX_BINS)]


# ---- fitting and forecasts (include/hrtrail/fit.h) ----
class HrtFitModelOptions(ctypes.Structure):
    """struct hrt_fit_model_options."""
    _fields_ = [("mass_prior", ctypes.c_int32), ("reserved_", ctypes.c_int32)] + \
        [(n, ctypes.c_double) for n in ("mass_min_msun", "mass_max_msun", "age_max_yr", "feh_min", "feh_max",
                                        "feh_step_dex", "log_mass_step_dex")]


#: fields of struct hrt_fit_obs in order, each followed by its _sigma
FIT_OBS_QUANTITIES = ("teff_k", "log_l_lsun", "feh", "log_g_cgs", "flux_w_m2", "mbol", "distance_pc", "parallax_mas")


class HrtFitObs(ctypes.Structure):
    """struct hrt_fit_obs."""
    _fields_ = [(n + s, ctypes.c_double) for n in FIT_OBS_QUANTITIES for s in ("", "_sigma")]


class HrtFitInterval(ctypes.Structure):
    """struct hrt_fit_interval."""
    _fields_ = [("median", ctypes.c_double), ("lo", ctypes.c_double), ("hi", ctypes.c_double)]


class HrtMsOptions(ctypes.Structure):
    """struct hrt_ms_options."""
    _fields_ = [("age_min_yr", ctypes.c_double), ("age_max_yr", ctypes.c_double), ("imf_alpha", ctypes.c_double),
                ("n_masses", ctypes.c_int32), ("n_ages", ctypes.c_int32), ("reserved", ctypes.c_double * 4)]


class HrtMsValue(ctypes.Structure):
    """struct hrt_ms_value."""
    _fields_ = [(n, ctypes.c_double) for n in ("median", "lo", "hi", "band_lo", "band_hi")]


class HrtMsEstimate(ctypes.Structure):
    """struct hrt_ms_estimate."""
    _fields_ = [("status", ctypes.c_int32), ("n_models", ctypes.c_int32), ("z", ctypes.c_double)] + \
        [(n, HrtMsValue) for n in ("log_l_lsun", "log_teff_k", "log_r_rsun", "log_g_cgs", "mass_msun",
                                   "initial_mass_msun", "age_yr")] + [("reserved", ctypes.c_double * 4)]


class HrtMsDistanceResult(ctypes.Structure):
    """struct hrt_ms_distance_result."""
    _fields_ = [("status", ctypes.c_int32), ("n_models", ctypes.c_int32), ("distance_pc", HrtFitInterval),
                ("parallax_mas", HrtFitInterval), ("reserved", ctypes.c_double * 4)]


class HrtFitSample(ctypes.Structure):
    """struct hrt_fit_sample."""
    _fields_ = [(n, ctypes.c_double) for n in ("initial_mass_msun", "z", "age_yr", "log_l_lsun", "log_teff_k")] + \
        [("phase", ctypes.c_int32), ("reserved_", ctypes.c_int32)]


#: interval fields of struct hrt_fit_result, in order
FIT_RESULT_INTERVALS = ("initial_mass_msun", "age_yr", "feh", "mass_msun", "r_rsun", "log_l_lsun", "teff_k",
                        "log_g_cgs", "distance_pc")


class HrtFitResult(ctypes.Structure):
    """struct hrt_fit_result."""
    _fields_ = [("struct_size", ctypes.c_uint32), ("status", ctypes.c_int32), ("flags", ctypes.c_int32),
                ("phase", ctypes.c_int32), ("phase_second", ctypes.c_int32), ("n_obs", ctypes.c_int32)] + \
        [(n, HrtFitInterval) for n in FIT_RESULT_INTERVALS] + \
        [("phase_prob", ctypes.c_double * PHASE_SLOTS), ("phase_mass_msun", HrtFitInterval * 2),
         ("phase_age_yr", HrtFitInterval * 2), ("chi2_min", ctypes.c_double), ("n_eff", ctypes.c_double),
         ("n_points", ctypes.c_double), ("reserved", ctypes.c_double * 8)]


class HrtForecastState(ctypes.Structure):
    """struct hrt_forecast_state."""
    _fields_ = [("dt_yr", ctypes.c_double), ("phase", ctypes.c_int32), ("reserved_", ctypes.c_int32),
                ("phase_prob", ctypes.c_double * PHASE_SLOTS), ("luminous_frac", ctypes.c_double)] + \
        [(n, HrtFitInterval) for n in ("log_l_lsun", "teff_k", "r_rsun", "mass_msun")]


FORECAST_MAX_EVENTS = 24  # HRT_FORECAST_MAX_EVENTS


class HrtForecastEvent(ctypes.Structure):
    """struct hrt_forecast_event."""
    _fields_ = [("name", ctypes.c_char * 32), ("prob", ctypes.c_double), ("in_yr", HrtFitInterval)]


class HrtForecastPhase(ctypes.Structure):
    """struct hrt_forecast_phase."""
    _fields_ = [("prob", ctypes.c_double), ("start_in_yr", HrtFitInterval), ("duration_yr", HrtFitInterval)]


class HrtForecastResult(ctypes.Structure):
    """struct hrt_forecast_result."""
    _fields_ = [("struct_size", ctypes.c_uint32), ("status", ctypes.c_int32), ("remnant", ctypes.c_int32),
                ("phase_now", ctypes.c_int32), ("n_samples", ctypes.c_double),
                ("phase_now_prob", ctypes.c_double * PHASE_SLOTS), ("ms_prob", ctypes.c_double),
                ("ms_left_yr", HrtFitInterval), ("end_in_yr", HrtFitInterval),
                ("future", HrtForecastPhase * PHASE_SLOTS), ("n_events", ctypes.c_size_t),
                ("events", HrtForecastEvent * FORECAST_MAX_EVENTS), ("remnant_prob", ctypes.c_double * REMNANT_SLOTS),
                ("remnant_mass_msun", HrtFitInterval), ("reserved", ctypes.c_double * 8)]


# ---- building and importing grids (include/hrtrail/build.h) ----
IMPORT_MAX_KP = 32  # HRT_IMPORT_MAX_KP


class HrtRouteSpec(ctypes.Structure):
    """struct hrt_route_spec."""
    _fields_ = [("name", ctypes.c_char_p), ("n_keypoints", ctypes.c_size_t),
                ("keypoint_names", ctypes.POINTER(ctypes.c_char_p)), ("segment_samples", ctypes.POINTER(ctypes.c_int))]


class HrtTrackData(ctypes.Structure):
    """struct hrt_track_data."""
    _fields_ = [("initial_mass_msun", ctypes.c_double), ("route", ctypes.c_int), ("remnant", ctypes.c_int),
                ("remnant_mass_msun", ctypes.c_double), ("n", ctypes.c_size_t)] + \
        [(n, _DP) for n in ("log_age_yr", "log_l_lsun", "log_teff_k", "log_r_rsun", "mass_msun",
                            "he_core_mass_msun", "co_core_mass_msun")] + \
        [("phase", ctypes.POINTER(ctypes.c_int)), ("n_keypoints", ctypes.c_size_t),
         ("keypoint_sample", ctypes.POINTER(ctypes.c_size_t))]


#: double columns of struct hrt_kp_columns, in order
KP_COLUMNS = ("age_yr", "log_l_lsun", "log_teff_k", "mass_msun", "central_x", "central_y", "he_core_mass_msun",
              "co_core_mass_msun")


class HrtKpColumns(ctypes.Structure):
    """struct hrt_kp_columns."""
    _fields_ = [("n", ctypes.c_size_t)] + [(n, _DP) for n in KP_COLUMNS] + \
        [("phase", ctypes.POINTER(ctypes.c_int)), ("flag", ctypes.POINTER(ctypes.c_char_p))]


class HrtKpResult(ctypes.Structure):
    """struct hrt_kp_result."""
    _fields_ = [("n_found", ctypes.c_size_t), ("sample", ctypes.c_size_t * IMPORT_MAX_KP),
                ("how", ctypes.c_int * IMPORT_MAX_KP), ("why", ctypes.c_char * 192)]


class HrtImportTrackReport(ctypes.Structure):
    """struct hrt_import_track_report."""
    _fields_ = [("file", ctypes.c_char_p), ("status", ctypes.c_int), ("line", ctypes.c_long),
                ("column", ctypes.c_long), ("message", ctypes.c_char * 320), ("notes", ctypes.c_char * 320),
                ("initial_mass_msun", ctypes.c_double), ("z", ctypes.c_double), ("route", ctypes.c_int),
                ("truncated", ctypes.c_int), ("remnant", ctypes.c_int), ("remnant_mass_msun", ctypes.c_double),
                ("n_rows", ctypes.c_size_t), ("n_rows_dropped", ctypes.c_size_t), ("n_keypoints", ctypes.c_size_t),
                ("keypoint_age_yr", ctypes.c_double * IMPORT_MAX_KP), ("keypoint_line", ctypes.c_long * IMPORT_MAX_KP),
                ("keypoint_how", ctypes.c_int * IMPORT_MAX_KP), ("missing", ctypes.c_char * 192)]


class HrtImportRowReport(ctypes.Structure):
    """struct hrt_import_row_report."""
    _fields_ = [("line", ctypes.c_long), ("column", ctypes.c_long), ("code", ctypes.c_int),
                ("message", ctypes.c_char * 320)]


ACCURACY_NQ = 3  # HRT_ACCURACY_NQ: log L, log Teff, log age


class HrtAccuracyRow(ctypes.Structure):
    """struct hrt_accuracy_row."""
    _fields_ = [("interp", ctypes.c_int), ("route", ctypes.c_int), ("phase", ctypes.c_int),
                ("n_points", ctypes.c_size_t), ("n_tracks", ctypes.c_size_t),
                ("median", ctypes.c_double * ACCURACY_NQ), ("p95", ctypes.c_double * ACCURACY_NQ),
                ("max", ctypes.c_double * ACCURACY_NQ), ("worst_mass_msun", ctypes.c_double * ACCURACY_NQ),
                ("worst_z", ctypes.c_double * ACCURACY_NQ), ("worst_eep", ctypes.c_size_t * ACCURACY_NQ),
                ("wd_mass_max_msun", ctypes.c_double)]


class HrtInterpError(ctypes.Structure):
    """struct hrt_interp_error."""
    _fields_ = [("log_l_dex", ctypes.c_double), ("log_teff_dex", ctypes.c_double), ("log_age_dex", ctypes.c_double),
                ("n_tracks", ctypes.c_int32), ("reserved", ctypes.c_double * 4)]


#: void (*progress)(void *user, size_t done, size_t total)
ACCURACY_PROGRESS_FN = ctypes.CFUNCTYPE(None, ctypes.c_void_p, ctypes.c_size_t, ctypes.c_size_t)

#: void (*progress)(void *user, size_t done, size_t total, const char *file)
PROGRESS_FN = ctypes.CFUNCTYPE(None, ctypes.c_void_p, ctypes.c_size_t, ctypes.c_size_t, ctypes.c_char_p)


class AbiMismatchError(ImportError):
    """The shared library found is not the one this package was written for."""


def _candidates():
    """Library names or paths to try, in order."""
    env = os.environ.get("HRTRAIL_LIB")
    if env:
        return [env]  # explicit choice: no silent fallback to another copy
    # The soname on the loader's path (LD_LIBRARY_PATH, ldconfig), as a C program finds it;
    # then where meson installed it (when ldconfig has not been run for that directory).
    out = ["libhrtrail.so.%d" % ABI_VERSION]
    try:
        from . import _install  # written by meson at configure time, installed with the package
        out.append(os.path.join(_install.LIBDIR, "libhrtrail.so.%d" % ABI_VERSION))
    except ImportError:
        pass
    found = ctypes.util.find_library("hrtrail")
    if found:
        out.append(found)
    return out


def _open_library():
    tried = []
    for name in _candidates():
        try:
            return ctypes.CDLL(name), name
        except OSError as e:
            tried.append("%s (%s)" % (name, e))
    raise ImportError("hrtrail: cannot load libhrtrail; tried: " + "; ".join(tried) +
                      ". Install the library (meson install, then ldconfig) or set HRTRAIL_LIB "
                      "to the path of libhrtrail.so.%d." % ABI_VERSION)


def _check_abi(lib, name):
    """The ABI guard: the library's ABI number and sizeof(hrt_state) must be ours."""
    try:
        abi_fn, size_fn = lib.hrt_abi_version, lib.hrt_state_size
    except AttributeError:
        raise AbiMismatchError("hrtrail: %s has no hrt_abi_version()/hrt_state_size(): "
                               "not an hrtrail library of ABI %d" % (name, ABI_VERSION)) from None
    abi_fn.restype, abi_fn.argtypes = ctypes.c_int, []
    size_fn.restype, size_fn.argtypes = ctypes.c_size_t, []
    abi, size = abi_fn(), size_fn()
    if abi != ABI_VERSION or size != ctypes.sizeof(HrtState):
        raise AbiMismatchError(
            "hrtrail: library %s reports ABI %d and sizeof(hrt_state) = %d bytes; this Python "
            "package was written for ABI %d and %d bytes. Install matching versions of the "
            "library and the package." % (name, abi, size, ABI_VERSION, ctypes.sizeof(HrtState)))


def _declare(lib):
    vp, sz, i, d, cp, lg, u64 = (ctypes.c_void_p, ctypes.c_size_t, ctypes.c_int, ctypes.c_double,
                                 ctypes.c_char_p, ctypes.c_long, ctypes.c_uint64)
    err = ctypes.POINTER(HrtError)
    pvp, pd, pi, psz = ctypes.POINTER(vp), _DP, ctypes.POINTER(i), ctypes.POINTER(sz)
    protos = {
        "hrt_strerror": (cp, [i]),
        "hrt_version": (cp, []),
        "hrt_phase_name": (cp, [i]),
        "hrt_phase_key": (cp, [i]),
        "hrt_phase_from_key": (i, [cp]),
        "hrt_phase_code": (i, [sz]),
        "hrt_remnant_name": (cp, [i]),
        "hrt_remnant_key": (cp, [i]),
        "hrt_remnant_from_key": (i, [cp]),
        "hrt_remnant_code": (i, [sz]),
        "hrt_interp_name": (cp, [i]),
        "hrt_interp_from_name": (i, [cp]),
        "hrt_grid_open_with": (i, [cp, i, pvp, err]),
        "hrt_grid_close": (None, [vp]),
        "hrt_grid_upgrade": (i, [cp, cp, err]),
        "hrt_default_grid_path": (cp, []),
        "hrt_grid_interp": (i, [vp]),
        "hrt_grid_n_z": (sz, [vp]),
        "hrt_grid_z": (d, [vp, sz]),
        "hrt_grid_z_ref": (d, [vp]),
        "hrt_grid_n_masses": (sz, [vp, sz]),
        "hrt_grid_mass": (d, [vp, sz, sz]),
        "hrt_grid_track_route": (i, [vp, sz, sz]),
        "hrt_grid_track_n_eep": (sz, [vp, sz, sz]),
        "hrt_grid_n_routes": (sz, [vp]),
        "hrt_grid_route_name": (cp, [vp, sz]),
        "hrt_grid_route_n_eep": (sz, [vp, sz]),
        "hrt_grid_route_n_keypoints": (sz, [vp, sz]),
        "hrt_grid_keypoint_name": (cp, [vp, sz, sz]),
        "hrt_grid_keypoint_eep": (lg, [vp, sz, sz]),
        "hrt_grid_route_boundary": (d, [vp, sz, sz]),
        "hrt_grid_attribute": (cp, [vp, cp]),
        "hrt_grid_memory_bytes": (sz, [vp]),
        "hrt_grid_mass_range": (i, [vp, d, pd, pd]),
        "hrt_grid_z_range": (i, [vp, pd, pd]),
        "hrt_grid_route_of": (i, [vp, d, d, pi]),
        # Arrays go in as plain addresses (c_void_p): no per-call conversion.
        "hrt_eval": (i, [vp, sz, vp, vp, d, vp, vp, err]),
        "hrt_star_new": (i, [vp, d, d, pvp, err]),
        "hrt_star_free": (None, [vp]),
        "hrt_star_at": (i, [vp, d, vp]),
        "hrt_remap": (i, [vp, vp, d, vp, err]),
        "hrt_step": (i, [vp, vp, d, d, vp, pd, err]),
        "hrt_star_n_eep": (sz, [vp]),
        "hrt_star_eep_state": (i, [vp, sz, vp]),
        "hrt_star_route": (i, [vp]),
        "hrt_star_mass": (d, [vp]),
        "hrt_star_z": (d, [vp]),
        "hrt_star_n_keypoints": (sz, [vp]),
        "hrt_star_keypoint_name": (cp, [vp, sz]),
        "hrt_star_keypoint_age": (i, [vp, sz, pd]),
        "hrt_star_end_age": (d, [vp]),
        "hrt_star_remnant": (i, [vp, pi, pd]),
        "hrt_star_phases": (i, [vp, ctypes.POINTER(HrtPhaseSpan), sz, psz]),
        "hrt_isochrone": (i, [vp, d, d, vp, sz, psz, err]),
        "hrt_isochrone_options_default": (None, [ctypes.POINTER(HrtIsochroneOptions)]),
        "hrt_isochrone_with": (i, [vp, d, d, ctypes.POINTER(HrtIsochroneOptions), vp, sz, psz, err]),
        "hrt_wd_radius_rsun": (d, [d]),
        "hrt_wd_log_l": (d, [d, i, d, d]),
        "hrt_grid_open": (i, [cp, pvp, err]),
        "hrt_grid_boundary_at": (i, [vp, d, sz, pd]),
        "hrt_collapse_remnant": (i, [d, d, pi, pd]),
        "hrt_bc_v": (d, [d]),
        "hrt_magnitudes": (i, [sz, vp, d, d, vp, vp, vp, vp, vp, err]),
        # extra quantities of a grid
        "hrt_grid_extra_count": (sz, [vp]),
        "hrt_grid_extra_name": (cp, [vp, sz]),
        "hrt_grid_extra_unit": (cp, [vp, sz]),
        "hrt_grid_extra_meaning": (cp, [vp, sz]),
        "hrt_grid_extra_index": (lg, [vp, cp]),
        "hrt_state_extra": (i, [vp, vp, sz, psz, vp, err]),
        "hrt_extra_at": (i, [vp, d, d, d, sz, psz, vp, vp, err]),
        # populations
        "hrt_imf_name": (cp, [i]),
        "hrt_imf_from_name": (i, [cp]),
        "hrt_imf_init": (i, [vp, i, d, d, d, err]),
        "hrt_imf_pdf": (d, [vp, d]),
        "hrt_imf_cdf": (d, [vp, d]),
        "hrt_imf_quantile": (d, [vp, d]),
        "hrt_imf_mean_mass": (d, [vp]),
        "hrt_sfh_name": (cp, [i]),
        "hrt_sfh_from_name": (i, [cp]),
        "hrt_pop_spec_default": (None, [vp]),
        "hrt_pop_spec_check": (i, [vp, err]),
        "hrt_pop_n_chunks": (u64, [vp]),
        "hrt_pop_draw": (i, [vp, u64, vp, vp, vp, sz, psz, err]),
        "hrt_pop_sum_value": (d, [vp]),
        "hrt_pop_summary_init": (i, [vp, d, vp, err]),
        "hrt_pop_summary_add": (i, [vp, vp, sz, err]),
        "hrt_pop_summary_add_unborn": (None, [vp, u64]),
        "hrt_pop_summary_merge": (i, [vp, vp, err]),
        "hrt_pop_turnoff_mass": (d, [vp]),
        "hrt_pop_max_threads": (i, []),
        "hrt_eval_parallel": (i, [vp, sz, vp, vp, d, vp, vp, i, err]),
        "hrt_pop_run": (i, [vp, vp, u64, u64, i, sz, vp, err]),
        "hrt_pop_part_new": (i, [vp, sz, vp, vp, cp, pvp, err]),
        "hrt_pop_part_free": (None, [vp]),
        "hrt_pop_part_run": (i, [vp, vp, u64, u64, i, err]),
        "hrt_pop_part_add": (i, [vp, u64, u64, vp, err]),
        "hrt_pop_part_merge": (i, [vp, vp, err]),
        "hrt_pop_part_spec": (vp, [vp]),
        "hrt_pop_part_n_ages": (sz, [vp]),
        "hrt_pop_part_summary": (vp, [vp, sz]),
        "hrt_pop_part_note": (cp, [vp]),
        "hrt_pop_part_n_ranges": (sz, [vp]),
        "hrt_pop_part_range": (i, [vp, sz, ctypes.POINTER(u64), ctypes.POINTER(u64)]),
        "hrt_pop_part_chunks_done": (u64, [vp]),
        "hrt_pop_part_complete": (i, [vp]),
        "hrt_pop_part_save": (i, [vp, vp, sz, psz, err]),
        "hrt_pop_part_load": (i, [vp, sz, pvp, err]),
        "hrt_pop_catalogue_open": (i, [cp, i, pvp, err]),
        "hrt_pop_catalogue_add": (i, [vp, d, sz, vp, vp, vp, err]),
        "hrt_pop_catalogue_close": (i, [vp, ctypes.POINTER(u64), err]),
        # fitting and forecasts
        "hrt_fit_mass_prior_name": (cp, [i]),
        "hrt_fit_mass_prior_from_name": (i, [cp]),
        "hrt_fit_model_options_default": (None, [vp]),
        "hrt_fit_model_new": (i, [vp, vp, pvp, err]),
        "hrt_fit_model_free": (None, [vp]),
        "hrt_fit_model_memory_bytes": (sz, [vp]),
        "hrt_fit_model_get_options": (i, [vp, vp]),
        "hrt_fit_model_n_feh": (sz, [vp]),
        "hrt_fit_model_feh": (d, [vp, sz]),
        "hrt_fit_obs_init": (None, [vp]),
        "hrt_fit_star": (i, [vp, vp, u64, sz, vp, vp, err]),
        "hrt_fit_distance_m": (d, [d, d]),
        "hrt_fit_flux_from_mbol": (d, [d]),
        "hrt_forecast": (i, [vp, sz, vp, sz, vp, vp, vp, err]),
        # the main sequence as a calibration curve
        "hrt_ms_options_default": (None, [vp]),
        "hrt_ms_new": (i, [vp, d, vp, pvp, err]),
        "hrt_ms_free": (None, [vp]),
        "hrt_ms_teff_range": (i, [vp, pd, pd]),
        "hrt_ms_log_l_range": (i, [vp, pd, pd]),
        "hrt_ms_from_teff": (i, [vp, d, d, vp, err]),
        "hrt_ms_from_log_l": (i, [vp, d, d, vp, err]),
        "hrt_ms_distance": (i, [vp, d, d, d, d, vp, err]),
        # building and importing grids
        "hrt_builder_new": (i, [sz, vp, d, pvp, err]),
        "hrt_builder_free": (None, [vp]),
        "hrt_builder_add_track": (i, [vp, d, vp, err]),
        "hrt_builder_add_eep_track": (i, [vp, d, vp, err]),
        "hrt_builder_set_route_boundaries": (i, [vp, d, vp, err]),
        "hrt_builder_set_compression": (i, [vp, i, err]),
        "hrt_builder_set_attribute": (i, [vp, cp, cp, err]),
        "hrt_builder_write": (i, [vp, cp, err]),
        "hrt_builder_declare_extra": (i, [vp, cp, cp, cp, err]),
        "hrt_builder_set_extra_single": (i, [vp, cp, i, err]),
        "hrt_builder_extra_count": (sz, [vp]),
        "hrt_builder_add_track_extra": (i, [vp, d, vp, sz, vp, err]),
        "hrt_builder_add_eep_track_extra": (i, [vp, d, vp, sz, vp, err]),
        "hrt_import_add_extra": (i, [vp, cp, cp, cp, cp, err]),
        "hrt_import_n_extra": (sz, [vp]),
        "hrt_keypoints_find": (i, [vp, vp, vp, err]),
        "hrt_keypoints_route": (i, [vp, sz, vp, pi, ctypes.POINTER(ctypes.c_uint), vp, err]),
        "hrt_default_route": (i, [sz, vp, vp]),
        "hrt_import_new": (i, [pvp, err]),
        "hrt_import_free": (None, [vp]),
        "hrt_import_map": (i, [vp, cp, err]),
        "hrt_import_map_file": (i, [vp, cp, err]),
        "hrt_import_set_routes": (i, [vp, sz, vp, err]),
        "hrt_import_set_z_ref": (i, [vp, d, err]),
        "hrt_import_set_lenient": (i, [vp, i]),
        "hrt_import_set_force": (i, [vp, i]),
        "hrt_import_set_pre_ms": (i, [vp, i, err]),
        "hrt_import_set_route_boundaries": (i, [vp, d, sz, vp, err]),
        "hrt_import_set_progress": (i, [vp, PROGRESS_FN, vp]),
        "hrt_import_add_file": (i, [vp, cp, d, err]),
        "hrt_import_run": (i, [vp, cp, err]),
        "hrt_import_n_tracks": (sz, [vp]),
        "hrt_import_track": (i, [vp, sz, vp]),
        "hrt_import_dropped_row": (i, [vp, sz, sz, vp]),
        "hrt_import_n_routes": (sz, [vp]),
        "hrt_import_route_name": (cp, [vp, sz]),
        "hrt_import_route_n_keypoints": (sz, [vp, sz]),
        "hrt_import_keypoint_name": (cp, [vp, sz, sz]),
        "hrt_import_n_z": (sz, [vp]),
        "hrt_import_z": (d, [vp, sz]),
        "hrt_import_route_boundary": (d, [vp, sz, sz]),
        # interpolation accuracy (leave one track out)
        "hrt_accuracy_new": (i, [pvp, err]),
        "hrt_accuracy_free": (None, [vp]),
        "hrt_accuracy_set_interp": (i, [vp, i, err]),
        "hrt_accuracy_set_threads": (i, [vp, i, err]),
        "hrt_accuracy_set_z": (i, [vp, d, err]),
        "hrt_accuracy_set_across_z": (i, [vp, i, err]),
        "hrt_accuracy_set_progress": (i, [vp, ACCURACY_PROGRESS_FN, vp]),
        "hrt_accuracy_run": (i, [vp, vp, err]),
        "hrt_accuracy_n_rows": (sz, [vp]),
        "hrt_accuracy_row_at": (i, [vp, sz, vp]),
        "hrt_accuracy_store": (i, [vp, cp, err]),
        "hrt_state_interp_error": (i, [vp, vp, vp, err]),
        "hrt_grid_has_interp_error": (i, [vp]),
    }
    for fname, (res, args) in protos.items():
        fn = getattr(lib, fname)
        fn.restype, fn.argtypes = res, args


def load():
    """Find, check and declare libhrtrail; returns (CDLL, the name it was loaded by)."""
    lib, name = _open_library()
    _check_abi(lib, name)
    _declare(lib)
    return lib, name


lib, library_path = load()


def text(b):
    """A C string returned by the library as str (None stays None)."""
    return None if b is None else b.decode("utf-8", errors="replace")
