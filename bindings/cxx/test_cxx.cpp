// The public header as C++ (g++, -Wall -Wextra -Werror -pedantic), the C++
// layer hrtrail.hpp, and the answers against the same calls made from C
// (bindings/python/tests/c_side.c, compiled as C and linked in).
//
//   test_cxx GRID            layout, phase and remnant codes, evaluation, isochrones (with options),
//                            default routes, star, errors
//   test_cxx GRID mismatch   with a stand-in reporting ABI 99 preloaded: the guard must throw
#include <cmath>
#include <cstddef>
#include <cstdio>
#include <cstring>
#include <string>
#include <type_traits>
#include <vector>

#include "hrtrail.hpp"
#include "state_layout.h"

extern "C" {
int ref_state_n_fields(void);
int ref_state_field(int i, char *name, size_t *offset, size_t *size);
size_t ref_sizeof(int which);
int ref_eval(const char *path, size_t n, const double *m, const double *z, double z_all, const double *a,
             hrt_state *out, char *msg);
int ref_isochrone(const char *path, double age, double z, size_t cap, hrt_state *out, size_t *n);
}

static int checks, failures;

static void expect(bool ok, const std::string &what)
{
    checks++;
    if (!ok) {
        failures++;
        std::printf("FAIL: %s\n", what.c_str());
    }
}

static bool same_bytes(const std::vector<hrt_state> &a, const std::vector<hrt_state> &b)
{
    return a.size() == b.size() && (a.empty() || std::memcmp(a.data(), b.data(), a.size() * sizeof(hrt_state)) == 0);
}

// One entry of HRT_PHASE_LIST or HRT_REMNANT_LIST as the header has it.
struct code_entry {
    int code;
    const char *key, *text;
};
#define CXX_CODE_ENTRY_(name, code, key, text) {code, key, text},
static const code_entry header_phases[] = {HRT_PHASE_LIST(CXX_CODE_ENTRY_)};
static const code_entry header_remnants[] = {HRT_REMNANT_LIST(CXX_CODE_ENTRY_)};
#undef CXX_CODE_ENTRY_

// The header's list against the library's: the i-th entry is the library's
// i-th code (code_of), with the library's key and name, below the slot count;
// the list has n entries and the library no more.
static void check_codes(const char *what, const code_entry *list, size_t n_list, size_t n, int slots,
                        int (*code_of)(size_t), const char *(*key_of)(int), const char *(*name_of)(int))
{
    const std::string w = what;
    expect(n_list == n, w + ": the header's list has " + std::to_string(n) + " entries");
    expect(n > 0 && code_of(n - 1) >= 0 && code_of(n) == -1, w + ": the library lists " + std::to_string(n));
    for (size_t i = 0; i < n_list; i++) {
        const code_entry &e = list[i];
        expect(code_of(i) == e.code, w + " " + e.key + ": code " + std::to_string(e.code) + " is the library's " +
                                         std::to_string(i) + "-th, " + std::to_string(code_of(i)));
        expect(std::strcmp(key_of(e.code), e.key) == 0, w + " " + e.key + ": key in the library " + key_of(e.code));
        expect(std::strcmp(name_of(e.code), e.text) == 0, w + " " + e.key + ": name in the library " +
                                                              name_of(e.code));
        expect(e.code >= 0 && e.code < slots, w + " " + e.key + ": code below the slot count");
        for (size_t k = 0; k < i; k++)
            expect(list[k].code != e.code, w + " " + e.key + ": code unique");
    }
}

static_assert(std::is_standard_layout<hrt_state>::value, "hrt_state is standard layout in C++");
static_assert(std::is_trivially_copyable<hrt_state>::value, "hrt_state is trivially copyable in C++");

int main(int argc, char **argv)
{
    if (argc < 2) {
        std::printf("usage: test_cxx GRID [mismatch]\n");
        return 2;
    }
    const std::string grid = argv[1];
    if (argc > 2 && std::string(argv[2]) == "mismatch") {
        try {
            hrtrail::Grid g(grid);
            expect(false, "the guard accepted a library reporting ABI 99");
        } catch (const hrtrail::Error &e) {
            expect(e.code() == HRT_E_VERSION && std::string(e.what()).find("reports ABI 99") != std::string::npos,
                   std::string("guard message: ") + e.what());
        }
        std::printf("c++: %d checks, %d failures\n", checks, failures);
        return failures ? 1 : 0;
    }

    // Layout: offsetof as g++ sees it equals offsetof as the C compiler does.
#define CXX_OFF_(f) offsetof(hrt_state, f),
#define CXX_SIZE_(f) sizeof(((hrt_state *)nullptr)->f),
    const size_t offs[] = {HRT_STATE_FIELDS(CXX_OFF_)};
    const size_t sizes[] = {HRT_STATE_FIELDS(CXX_SIZE_)};
    const int nf = (int)(sizeof offs / sizeof offs[0]);
    expect(nf == ref_state_n_fields(), "number of hrt_state fields");
    for (int i = 0; i < nf; i++) {
        char name[24];
        size_t off, sz;
        ref_state_field(i, name, &off, &sz);
        expect(off == offs[i] && sz == sizes[i], std::string("offset and size of hrt_state.") + name);
    }
    expect(sizeof(hrt_state) == ref_sizeof(0) && sizeof(hrt_error) == ref_sizeof(1) &&
               sizeof(hrt_phase_span) == ref_sizeof(2),
           "struct sizes");
    expect(hrt_state_size() == sizeof(hrt_state) && hrt_abi_version() == HRT_ABI_VERSION, "ABI of the library");
    expect(hrtrail::abi_version == hrt_abi_version(), "hrtrail.hpp is written for the library's ABI");

    // Phase and remnant codes: the header's lists, hence the enums, against the library's.
    check_codes("phase", header_phases, sizeof header_phases / sizeof header_phases[0], HRT_PHASE_N,
                HRT_PHASE_SLOTS, hrt_phase_code, hrt_phase_key, hrt_phase_name);
    check_codes("remnant", header_remnants, sizeof header_remnants / sizeof header_remnants[0], HRT_REMNANT_N,
                HRT_REMNANT_SLOTS, hrt_remnant_code, hrt_remnant_key, hrt_remnant_name);
    expect(hrt_phase_from_key("rgb") == HRT_PHASE_RGB && hrt_remnant_from_key("co_wd") == HRT_REMNANT_CO_WD,
           "enumerators HRT_PHASE_RGB and HRT_REMNANT_CO_WD are the codes of their keys");

    hrtrail::Grid g(grid);
    // Stars on a lattice of masses and ages, some outside the grid.
    std::vector<double> m, a;
    for (int i = 0; i < 60; i++)
        for (int j = 0; j < 50; j++) {
            m.push_back(0.05 * std::pow(200.0 / 0.05, i / 59.0));
            a.push_back(1e5 * std::pow(2e10 / 1e5, j / 49.0));
        }
    std::vector<hrt_state> cxx = g.evaluate(m, a, 0.014, false), c(m.size());
    char msg[256];
    int rc = ref_eval(grid.c_str(), m.size(), m.data(), nullptr, 0.014, a.data(), c.data(), msg);
    expect(same_bytes(cxx, c), "evaluate from C++ equals hrt_eval from C bit for bit");
    expect(rc == HRT_E_MASS_RANGE, "the lattice reaches outside the grid");
    try {
        g.evaluate(m, a, 0.014);
        expect(false, "no exception for stars outside the grid");
    } catch (const hrtrail::Error &e) {
        expect(e.code() == rc && std::string(e.what()) == std::string("hrt_eval: ") + msg,
               std::string("exception carries code and message: ") + e.what());
    }
    std::vector<hrt_state> iso = g.isochrone(1e9, 0.014), ciso(20000);
    size_t n = 0;
    ref_isochrone(grid.c_str(), 1e9, 0.014, ciso.size(), ciso.data(), &n);
    ciso.resize(n);
    expect(iso.size() > 100 && same_bytes(iso, ciso), "isochrone from C++ equals C");

    // Isochrones with options: the same bytes as hrt_isochrone_with called directly; only the phases asked.
    hrt_isochrone_options o = hrtrail::isochrone_options(), od;
    hrt_isochrone_options_default(&od);
    expect(std::memcmp(&o, &od, sizeof o) == 0, "isochrone_options() is hrt_isochrone_options_default");
    expect(same_bytes(g.isochrone(1e9, 0.014, o), iso), "isochrone with the default options equals the plain one");
    o.phases = HRT_PHASE_BIT(HRT_PHASE_MS) | HRT_PHASES_REMNANT;
    o.max_dlog_l = 0.05;
    std::vector<hrt_state> oiso = g.isochrone(2e9, 0.014, o), coiso(20000);
    rc = hrt_isochrone_with(g.get(), 2e9, 0.014, &o, coiso.data(), coiso.size(), &n, nullptr);
    coiso.resize(rc == HRT_OK ? n : 0);
    expect(!oiso.empty() && same_bytes(oiso, coiso), "isochrone with options equals hrt_isochrone_with");
    bool only_asked = true, has_wd = false;
    for (const hrt_state &p : oiso) {
        only_asked = only_asked && (o.phases & HRT_PHASE_BIT(p.phase)) != 0;
        has_wd = has_wd || p.phase == HRT_PHASE_WD;
    }
    expect(only_asked && has_wd, "only the phases asked, white dwarfs included");
    o.max_dlog_l = -1.0;
    try {
        g.isochrone(2e9, 0.014, o);
        expect(false, "no exception for a negative max_dlog_l");
    } catch (const hrtrail::Error &e) {
        expect(e.code() == HRT_E_DOMAIN, std::string("negative max_dlog_l: ") + e.what());
    }

    // The default routes: as hrt_default_route gives them, and as the default grid (written with them) has them.
    std::vector<hrtrail::Route> routes = hrtrail::default_routes();
    expect(!routes.empty() && routes.size() == hrt_grid_n_routes(g.get()), "as many default routes as the grid's");
    for (size_t r = 0; r < routes.size(); r++) {
        hrt_route_spec spec;
        const char *names[HRT_IMPORT_MAX_KP];
        bool same = hrt_default_route(r, &spec, names) == HRT_OK && routes[r].name == spec.name &&
                    routes[r].keypoint_names.size() == spec.n_keypoints &&
                    routes[r].segment_samples.size() + 1 == spec.n_keypoints;
        for (size_t k = 0; same && k < spec.n_keypoints; k++) {
            same = routes[r].keypoint_names[k] == spec.keypoint_names[k] &&
                   routes[r].keypoint_names[k] == hrt_grid_keypoint_name(g.get(), r, k) &&
                   (k + 1 == spec.n_keypoints || routes[r].segment_samples[k] == spec.segment_samples[k]);
        }
        expect(same && routes[r].name == hrt_grid_route_name(g.get(), r),
               "default route " + routes[r].name + " equals hrt_default_route and the grid's route");
    }
    try {
        hrtrail::default_route(routes.size());
        expect(false, "no exception past the last default route");
    } catch (const hrtrail::Error &e) {
        expect(e.code() == HRT_E_INVALID, std::string("past the last route: ") + e.what());
    }

    hrtrail::Star s(g, 1.0, 0.014);
    hrt_state st = s.at(4.57e9), ref;
    double m1 = 1.0, a1 = 4.57e9;
    ref_eval(grid.c_str(), 1, &m1, nullptr, 0.014, &a1, &ref, msg);
    expect(std::memcmp(&st, &ref, sizeof st) == 0, "Star::at equals hrt_eval from C");
    expect(s.phases().size() >= 3 && s.phases().front().phase == HRT_PHASE_PRE_MS, "phases");
    try {
        s.at(-1.0);
        expect(false, "no exception for a negative age");
    } catch (const hrtrail::Error &e) {
        expect(e.code() == HRT_E_DOMAIN, "negative age: HRT_E_DOMAIN");
    }
    try {
        hrtrail::Grid missing("/nonexistent/grid.h5");
        expect(false, "no exception for a missing grid");
    } catch (const hrtrail::Error &e) {
        expect(e.code() == HRT_E_IO && std::string(e.what()).find("/nonexistent/grid.h5") != std::string::npos,
               std::string("missing grid: ") + e.what());
    }
    std::printf("c++: %d checks, %d failures\n", checks, failures);
    return failures ? 1 : 0;
}
