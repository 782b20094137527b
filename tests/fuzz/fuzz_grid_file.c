/* libFuzzer target: arbitrary bytes as a grid file.  The bytes are written
 * to a temporary file and opened with hrt_grid_open; a grid that opens is
 * then queried through every path (fuzz_exercise).  Seeds
 * (corpus/fuzz_grid_file/): one_z.h5, the smallest valid grid of the current
 * format (chunked, compressed, checksummed; written by mkseed OUT 1), and
 * small.h5, an older uncompressed layout the reader refuses (no checksums). */
#include <stdint.h>

#include "fuzz_common.h"

static char path[64];

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    snprintf(path, sizeof path, "/tmp/hrt-fuzz-file-%ld.h5", (long)getpid());
    return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    FILE *f = fopen(path, "wb");
    if (!f)
        return 0;
    fwrite(data, 1, size, f);
    fclose(f);
    for (int interp = 0; interp < 2; interp++) {
        hrt_grid *g = (hrt_grid *)&g;
        hrt_error e = {-1, ""};
        int rc = hrt_grid_open_with(path, interp ? HRT_INTERP_AKIMA : HRT_INTERP_STEFFEN, &g, &e);
        FUZZ_REQUIRE(fuzz_known_code(rc) && e.code == rc);
        FUZZ_REQUIRE((rc == HRT_OK) == (g != NULL));
        if (rc != HRT_OK) {
            FUZZ_REQUIRE(rc == HRT_E_FORMAT || rc == HRT_E_VERSION || rc == HRT_E_IO || rc == HRT_E_NOMEM);
            FUZZ_REQUIRE(strlen(e.message) > 0);
            break;
        }
        fuzz_exercise(g, (unsigned)size);
        hrt_grid_close(g);
    }
    unlink(path);
    return 0;
}
