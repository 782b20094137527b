/* Field lists of the public structs, for the binding tests that compare the
 * layout seen by ctypes, Fortran and C++ with the C compiler's offsetof(). */
#ifndef HRT_BINDINGS_STATE_LAYOUT_H
#define HRT_BINDINGS_STATE_LAYOUT_H

#define HRT_STATE_FIELDS(X)                                                              \
    X(struct_size) X(status) X(phase) X(route) X(remnant) X(flags) X(initial_mass_msun) \
    X(z) X(age_yr) X(log_l_lsun) X(log_teff_k) X(log_r_rsun) X(log_g_cgs) X(mass_msun) \
    X(he_core_mass_msun) X(co_core_mass_msun) X(eep) X(phase_fraction)                 \
    X(phase_start_yr) X(phase_end_yr) X(remnant_mass_msun) X(reserved)

#define HRT_ERROR_FIELDS(X) X(code) X(message)
#define HRT_PHASE_SPAN_FIELDS(X) X(phase) X(reserved_) X(phase_start_yr) X(phase_end_yr)

#endif
