/* Writes the seed grid of the grid fuzzers: mkseed OUT.h5 [NZ]
 * NZ = 1: one metallicity, the smallest grid of the current layout
 * (corpus/fuzz_grid_file/one_z.h5, within that fuzzer's -max_len). */
#include "fuzz_common.h"

int main(int argc, char **argv)
{
    if (argc != 2 && !(argc == 3 && (!strcmp(argv[2], "1") || !strcmp(argv[2], "2"))))
        return 2;
    return fuzz_small_grid_nz(argv[1], argc == 3 ? atoi(argv[2]) : 2) == HRT_OK ? 0 : 1;
}
