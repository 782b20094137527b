/* A stand-in library reporting another ABI (FAKE_ABI) or another
 * sizeof(hrt_state) (FAKE_STATE_SIZE): the bindings' ABI guard must refuse it.
 * Loaded by ctypes in place of libhrtrail, or preloaded (LD_PRELOAD) in front
 * of the real library for the Fortran and C++ guards. */
#include <stddef.h>

int hrt_abi_version(void);
size_t hrt_state_size(void);

int hrt_abi_version(void) { return FAKE_ABI; }
size_t hrt_state_size(void) { return FAKE_STATE_SIZE; }
