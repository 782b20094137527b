// The C++ layer as a user builds it with CMake (hrtrail::hrtrail): the
// default route table and an isochrone with chosen phases, printed at full
// precision.
#include <cstdio>

#include <hrtrail.hpp>

int main()
{
    try {
        hrtrail::Grid g;
        for (const hrtrail::Route &r : hrtrail::default_routes())
            std::printf("route %s: %zu keypoints\n", r.name.c_str(), r.keypoint_names.size());
        hrt_isochrone_options o = hrtrail::isochrone_options();
        o.phases = HRT_PHASE_BIT(HRT_PHASE_MS);
        std::vector<hrt_state> iso = g.isochrone(1e9, hrt_grid_z_ref(g.get()), o);
        std::printf("isochrone: %zu points, first %.17g\n", iso.size(), iso.empty() ? 0.0 : iso[0].log_l_lsun);
    } catch (const hrtrail::Error &e) {
        std::fprintf(stderr, "consumer_cxx: %s\n", e.what());
        return 1;
    }
    return 0;
}
