/* libFuzzer target: the text-track importer (hrt_import_*).  The input is
 * a column map, a NUL byte, and the contents of one track file (more NUL
 * bytes separate further files).  Each file is imported in check-only mode
 * (no grid written) and, when the first byte says so, written as a grid
 * that must then open.  Properties: defined codes with messages, a report
 * for every file with a location inside the file, and an import that
 * succeeds writes a grid hrt_grid_open accepts. */
#include <stdint.h>
#include <sys/stat.h>

#include "fuzz_common.h"

static char dir[64];

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    snprintf(dir, sizeof dir, "/tmp/hrt-fuzz-import-%ld", (long)getpid());
    mkdir(dir, 0700);
    return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < 2 || size > 200000)
        return 0;
    unsigned mode = data[0];
    char *buf = malloc(size);
    memcpy(buf, data + 1, size - 1);
    buf[size - 1] = '\0';
    const char *map = buf;
    size_t off = strlen(map) + 1;
    char paths[4][128];
    size_t lines[4];
    int nf = 0;
    while (off < size - 1 && nf < 4) {
        const char *content = buf + off;
        size_t len = strnlen(content, size - 1 - off);
        snprintf(paths[nf], sizeof paths[nf], "%s/track_Z0.0%d_M%d.5.dat", dir, 1 + nf % 2, 1 + nf);
        FILE *f = fopen(paths[nf], "wb");
        if (!f)
            break;
        fwrite(content, 1, len, f);
        fclose(f);
        lines[nf] = 1;
        for (size_t k = 0; k < len; k++)
            lines[nf] += content[k] == '\n';
        nf++;
        off += len + 1;
    }
    hrt_import *imp = NULL;
    hrt_error e = {-1, ""};
    FUZZ_REQUIRE(hrt_import_new(&imp, &e) == HRT_OK);
    int rc = hrt_import_map(imp, map, &e);
    FUZZ_REQUIRE(fuzz_known_code(rc) && (rc == HRT_OK || strlen(e.message) > 0));
    hrt_import_set_lenient(imp, (mode & 1) != 0);
    /* a grid of a few fuzzed tracks rarely fills every route: forced unless
     * bit 8 asks for the refusal, so the write path stays covered */
    hrt_import_set_force(imp, (mode & 8) == 0);
    for (int k = 0; k < nf; k++)
        FUZZ_REQUIRE(hrt_import_add_file(imp, paths[k], (mode & 2) ? NAN : 0.014, &e) == HRT_OK);
    char out[160];
    snprintf(out, sizeof out, "%s/grid.h5", dir);
    int write = (mode & 4) != 0;
    e.code = -1;
    rc = hrt_import_run(imp, write ? out : NULL, &e);
    FUZZ_REQUIRE(fuzz_known_code(rc) && e.code == rc);
    if (rc != HRT_OK)
        FUZZ_REQUIRE(strlen(e.message) > 0);
    FUZZ_REQUIRE(hrt_import_n_tracks(imp) == (size_t)nf);
    for (int k = 0; k < nf; k++) {
        hrt_import_track_report t;
        FUZZ_REQUIRE(hrt_import_track(imp, (size_t)k, &t) == HRT_OK);
        FUZZ_REQUIRE(fuzz_known_code(t.status));
        FUZZ_REQUIRE(t.line >= 0 && (size_t)t.line <= lines[k] + 1);
        FUZZ_REQUIRE(t.n_keypoints <= HRT_IMPORT_MAX_KP);
        FUZZ_REQUIRE(memchr(t.message, '\0', sizeof t.message) && memchr(t.notes, '\0', sizeof t.notes));
    }
    hrt_import_free(imp);
    if (write && rc == HRT_OK) {
        hrt_grid *g = NULL;
        int grc = hrt_grid_open(out, &g, &e);
        if (grc != HRT_OK)
            fprintf(stderr, "fuzz: imported grid does not open: %s\n", e.message);
        FUZZ_REQUIRE(grc == HRT_OK);
        fuzz_exercise(g, (unsigned)size);
        hrt_grid_close(g);
    }
    if (write)
        FUZZ_REQUIRE(rc == HRT_OK || access(out, F_OK) != 0); /* a failed import writes nothing */
    unlink(out);
    for (int k = 0; k < nf; k++)
        unlink(paths[k]);
    free(buf);
    return 0;
}
