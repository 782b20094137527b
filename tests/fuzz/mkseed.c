/* Writes the seed grid of the grid fuzzers: mkseed OUT.h5 */
#include "fuzz_common.h"

int main(int argc, char **argv)
{
    if (argc != 2)
        return 2;
    return fuzz_small_grid(argv[1]) == HRT_OK ? 0 : 1;
}
