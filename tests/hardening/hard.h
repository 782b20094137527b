/* Small test harness of the hardening tests: plain C, no framework, so the
 * programs can run under valgrind, ASan, TSan and an allocation wrapper
 * without anything of their own getting in the way. */
#ifndef HRTRAIL_TESTS_HARD_H
#define HRTRAIL_TESTS_HARD_H

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int hard_failures;
static int hard_checks;

#define HARD_CHECK(cond, ...)                                                                          \
    do {                                                                                               \
        hard_checks++;                                                                                 \
        if (!(cond)) {                                                                                 \
            hard_failures++;                                                                           \
            fprintf(stderr, "%s:%d: FAILED %s: ", __FILE__, __LINE__, #cond);                          \
            fprintf(stderr, __VA_ARGS__);                                                              \
            fputc('\n', stderr);                                                                       \
        }                                                                                              \
    } while (0)

/* Deterministic random numbers of the tests (SplitMix64, Steele, Lea &
 * Flood 2014, "Fast splittable pseudorandom number generators"). */
static inline unsigned long long hard_next(unsigned long long *s)
{
    unsigned long long z = (*s += 0x9E3779B97F4A7C15ULL);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
}
static inline double hard_uniform(unsigned long long *s) { return (double)(hard_next(s) >> 11) * 0x1.0p-53; }

static inline int hard_finish(const char *name)
{
    printf("%s: %d checks, %d failed\n", name, hard_checks, hard_failures);
    return hard_failures ? EXIT_FAILURE : EXIT_SUCCESS;
}

#endif
