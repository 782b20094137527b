// hrtrail.hpp: a thin C++ layer over the C API of hrtrail.h (header only).
//
// RAII handles (hrtrail::Grid, hrtrail::Star), the default route table
// (hrtrail::default_route, default_routes), library errors as
// hrtrail::Error exceptions carrying the status code and the library's
// message, std::vector outputs.  The C header itself compiles as C++
// (extern "C"); this layer only adds idioms.  Units as in hrtrail.h: Msun,
// yr since birth, Z the metal mass fraction, log10, Lsun, Rsun, K, cm s^-2.
//
// Names are those of the C structs: the vocabulary of tracks/FORMAT.md, units
// in the names (hrt_state::log_l_lsun, ...); phases and remnant kinds are
// hrtrail's codes (HRT_PHASE_*, HRT_REMNANT_*).
//
// ABI guard: this layer is written for ABI 2 (hrtrail::abi_version), which
// the header it is compiled with must define; Grid's constructor checks that
// the loaded library reports that ABI and the sizeof(hrt_state) this code
// was compiled with, and throws hrtrail::Error (code HRT_E_VERSION) otherwise.
#ifndef HRTRAIL_HPP
#define HRTRAIL_HPP

#include <stdexcept>
#include <string>
#include <vector>

#include "hrtrail.h"

namespace hrtrail {

/** The ABI this layer was written for; changed by hand only. */
const int abi_version = 2;
static_assert(HRT_ABI_VERSION == abi_version, "hrtrail.hpp is written for ABI 2: use the hrtrail.hpp of this hrtrail.h");

/** A failure reported by the library: code() is the HRT_E_* status. */
class Error : public std::runtime_error {
public:
    Error(int code, const std::string &message) : std::runtime_error(message), code_(code) {}
    int code() const { return code_; }

private:
    int code_;
};

inline void check(int rc, const hrt_error &err, const char *what)
{
    if (rc != HRT_OK)
        throw Error(rc, std::string(what) + ": " + (err.code == rc ? err.message : hrt_strerror(rc)));
}

/** Throw unless the loaded library has this header's ABI and hrt_state size. */
inline void check_abi()
{
    if (hrt_abi_version() != abi_version || hrt_state_size() != sizeof(hrt_state))
        throw Error(HRT_E_VERSION, "hrtrail: the library reports ABI " + std::to_string(hrt_abi_version()) +
                                       " and sizeof(hrt_state) = " + std::to_string(hrt_state_size()) +
                                       " bytes; this program was compiled for ABI " +
                                       std::to_string(abi_version) + " and " +
                                       std::to_string(sizeof(hrt_state)) + " bytes");
}

/** An open grid; movable, not copyable. */
class Grid {
public:
    /** The default grid (path empty) or a grid file; interp is an hrt_interp. */
    explicit Grid(const std::string &path = std::string(), int interp = HRT_INTERP_STEFFEN)
    {
        check_abi();
        hrt_error err = hrt_error();
        check(hrt_grid_open_with(path.empty() ? nullptr : path.c_str(), interp, &g_, &err), err,
              "hrt_grid_open_with");
    }
    ~Grid() { hrt_grid_close(g_); }
    Grid(const Grid &) = delete;
    Grid &operator=(const Grid &) = delete;
    Grid(Grid &&o) noexcept : g_(o.g_) { o.g_ = nullptr; }
    Grid &operator=(Grid &&o) noexcept
    {
        std::swap(g_, o.g_);
        return *this;
    }
    const hrt_grid *get() const { return g_; }

    /** States of the stars (mass_msun[i], age_yr[i]) at one metallicity; throws on the first failure
     *  unless all_or_throw is false (then each state's status tells). */
    std::vector<hrt_state> evaluate(const std::vector<double> &mass_msun, const std::vector<double> &age_yr,
                                    double z, bool all_or_throw = true) const
    {
        if (mass_msun.size() != age_yr.size())
            throw Error(HRT_E_INVALID, "evaluate: mass_msun and age_yr differ in size");
        std::vector<hrt_state> out(mass_msun.size());
        hrt_error err = hrt_error();
        int rc = hrt_eval(g_, out.size(), mass_msun.data(), nullptr, z, age_yr.data(), out.data(), &err);
        if (all_or_throw)
            check(rc, err, "hrt_eval");
        return out;
    }

    /** The isochrone at age_yr and metallicity z (the default phases and sampling). */
    std::vector<hrt_state> isochrone(double age_yr, double z) const { return isochrone_(age_yr, z, nullptr); }

    /** The isochrone with options o (from hrtrail::isochrone_options(), changed as needed):
     *  the phases it holds (HRT_PHASE_BIT(code) each) and its largest log L step. */
    std::vector<hrt_state> isochrone(double age_yr, double z, const hrt_isochrone_options &o) const
    {
        return isochrone_(age_yr, z, &o);
    }

private:
    std::vector<hrt_state> isochrone_(double age_yr, double z, const hrt_isochrone_options *o) const
    {
        size_t n = 0;
        hrt_error err = hrt_error();
        int rc = hrt_isochrone_with(g_, age_yr, z, o, nullptr, 0, &n, &err);
        std::vector<hrt_state> out(n);
        if (rc == HRT_E_BUFFER)
            rc = hrt_isochrone_with(g_, age_yr, z, o, out.data(), out.size(), &n, &err);
        check(rc, err, "hrt_isochrone_with");
        out.resize(n);
        return out;
    }

    hrt_grid *g_ = nullptr;
};

/** The default isochrone options: every luminous, modelled phase, HRT_ISOCHRONE_MAX_DLOG_L. */
inline hrt_isochrone_options isochrone_options()
{
    hrt_isochrone_options o;
    hrt_isochrone_options_default(&o);
    return o;
}

/** One route of the default grid's EEP layout (hrt_default_route), as owned strings. */
struct Route {
    std::string name;                        ///< route name
    std::vector<std::string> keypoint_names; ///< its keypoints, in order
    std::vector<int> segment_samples;        ///< EEPs of each segment between them (one fewer)
};

/** Route r (from 0, by increasing mass) of the default layout; throws Error (HRT_E_INVALID) past the last. */
inline Route default_route(size_t r)
{
    hrt_route_spec spec;
    const char *names[HRT_IMPORT_MAX_KP];
    int rc = hrt_default_route(r, &spec, names);
    if (rc != HRT_OK)
        throw Error(rc, "hrt_default_route: no route " + std::to_string(r) + " in the default layout (" +
                            hrt_strerror(rc) + ")");
    Route out;
    out.name = spec.name;
    for (size_t k = 0; k < spec.n_keypoints; k++) {
        out.keypoint_names.push_back(spec.keypoint_names[k]);
        if (k + 1 < spec.n_keypoints)
            out.segment_samples.push_back(spec.segment_samples[k]);
    }
    return out;
}

/** Every route of the default layout, in order. */
inline std::vector<Route> default_routes()
{
    std::vector<Route> v;
    hrt_route_spec spec;
    const char *names[HRT_IMPORT_MAX_KP];
    for (size_t r = 0; hrt_default_route(r, &spec, names) == HRT_OK; r++)
        v.push_back(default_route(r));
    return v;
}

/** One star's interpolated track; the grid must outlive it. */
class Star {
public:
    Star(const Grid &g, double mass_msun, double z)
    {
        hrt_error err = hrt_error();
        check(hrt_star_new(g.get(), mass_msun, z, &s_, &err), err, "hrt_star_new");
    }
    ~Star() { hrt_star_free(s_); }
    Star(const Star &) = delete;
    Star &operator=(const Star &) = delete;

    /** State at age_yr (yr since birth). */
    hrt_state at(double age_yr) const
    {
        hrt_state s;
        hrt_error err = hrt_error();
        check(hrt_star_at(s_, age_yr, &s), err, "hrt_star_at");
        return s;
    }
    /** The phases of the star's life, remnant included. */
    std::vector<hrt_phase_span> phases() const
    {
        size_t n = 0;
        hrt_star_phases(s_, nullptr, 0, &n);
        std::vector<hrt_phase_span> v(n);
        hrt_error err = hrt_error();
        check(hrt_star_phases(s_, v.data(), v.size(), &n), err, "hrt_star_phases");
        return v;
    }
    double end_age_yr() const { return hrt_star_end_age(s_); }
    const hrt_star *get() const { return s_; }

private:
    hrt_star *s_ = nullptr;
};

} // namespace hrtrail

#endif
