// Timetables of a few stars, from C++ (hrtrail.hpp over the C API).
//
//   star_timeline [GRID]     (default: the installed default grid)
//
// The invented scenario: an observing programme, "the Quillon long-baseline
// programme", wants to know which of its candidate stars leave the main
// sequence within the next 200 Myr.  For each candidate (initial mass and
// metallicity as the programme assumed them, and its present age) the
// program prints the present state and the time left on the main sequence.
// Build against an installed hrtrail: g++ star_timeline.cpp $(pkg-config --cflags --libs hrtrail)
#include <cmath>
#include <cstdio>
#include <exception>

#include "hrtrail.hpp"

int main(int argc, char **argv)
{
    struct candidate {
        const char *label;
        double mass_msun, z, age_yr;
    };
    const candidate list[] = {{"Q-1", 1.9, 0.014, 1.05e9}, {"Q-2", 3.1, 0.010, 3.0e8}, {"Q-3", 1.2, 0.004, 3.9e9},
                              {"Q-4", 8.0, 0.020, 2.9e7}};
    try {
        hrtrail::Grid grid(argc > 1 ? argv[1] : "");
        std::printf("Quillon long-baseline programme (invented): main-sequence time left\n");
        for (const candidate &c : list) {
            hrtrail::Star star(grid, c.mass_msun, c.z);
            hrt_state now = star.at(c.age_yr);
            double ms_end = NAN;
            for (const hrt_phase_span &p : star.phases())
                if (p.phase == HRT_PHASE_MS)
                    ms_end = p.phase_end_yr;
            double left = ms_end - c.age_yr;
            std::printf("%-4s %5.2f Msun Z=%.3f age %.3g yr: %-26s log L %6.3f, Teff %6.0f K; ", c.label,
                        c.mass_msun, c.z, c.age_yr, hrt_phase_name(now.phase), now.log_l_lsun,
                        std::pow(10.0, now.log_teff_k));
            if (left > 0)
                std::printf("%.3g yr left on the main sequence%s\n", left, left < 2e8 ? "  <- within 200 Myr" : "");
            else
                std::printf("already past the main sequence\n");
        }
    } catch (const hrtrail::Error &e) {
        std::fprintf(stderr, "star_timeline: %s (code %d)\n", e.what(), e.code());
        return 1;
    } catch (const std::exception &e) {
        std::fprintf(stderr, "star_timeline: %s\n", e.what());
        return 1;
    }
    return 0;
}
