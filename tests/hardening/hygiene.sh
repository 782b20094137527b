#!/bin/sh
# Library hygiene, from the symbol tables (binutils nm):
#  1. no writable data of our own in the shared library (nm types b B d D,
#     apart from what the toolchain itself puts there and constant tables
#     the dynamic linker makes read-only after relocation),
#  2. no library object refers to abort, exit, the stdio printing functions,
#     stdout/stderr, assert, GSL's handler setters or non-reentrant libc calls,
#  3. only hrt_ symbols are exported.
# Usage: hygiene.sh libhrtrail.so libhrtrail.a
set -u
so=$1
ar=$2
fail=0
NM=${NM:-nm}

# Symbols the compiler, linker and sanitizer runtimes create in every shared
# object; none of them is state of ours.
toolchain='^(__TMC_END__|completed\.[0-9]+|_edata|_end|__bss_start|_DYNAMIC|_GLOBAL_OFFSET_TABLE_|__dso_handle|__data_start|data_start|__do_global_dtors_aux_fini_array_entry|__frame_dummy_init_array_entry|__init_array_(start|end)|__fini_array_(start|end)|_init|_fini|__(odr_)?asan.*|___asan.*|__ubsan.*|__sancov.*|__tsan.*|\.L.*)$'

# Constant data holding pointers (const tables of strings) sits in
# .data.rel.ro, which nm also shows as d: the dynamic linker makes it
# read-only after relocation (the GNU_RELRO segment), so a symbol whose
# address lies inside that segment is not writable state.
relro=$(${READELF:-readelf} -lW "$so" 2>/dev/null | awk '$1 == "GNU_RELRO" {print $3, $6}')
writable=$($NM --defined-only "$so" | awk -v relro="$relro" '
    function hex(s,    v, i) { sub(/^0x/, "", s); v = 0
        for (i = 1; i <= length(s); i++) v = v * 16 + index("0123456789abcdef", tolower(substr(s, i, 1))) - 1
        return v }
    BEGIN { n = split(relro, r, " "); lo = n == 2 ? hex(r[1]) : 0; hi = n == 2 ? lo + hex(r[2]) : 0 }
    $2 ~ /^[bBdDgGsS]$/ { a = hex($1); if (!($2 ~ /^[dD]$/ && a >= lo && a < hi)) print $3 }' |
    grep -Ev "$toolchain")
if [ -n "$writable" ]; then
    echo "hygiene: writable data symbols in $so:"
    echo "$writable" | sed 's/^/    /'
    fail=1
fi

forbidden='^(abort|exit|_exit|_Exit|quick_exit|atexit|printf|vprintf|fprintf|vfprintf|dprintf|vdprintf|puts|fputs|fputs_unlocked|putchar|putchar_unlocked|putc|putc_unlocked|fputc|fputc_unlocked|perror|fwrite|fwrite_unlocked|psignal|stdout|stderr|__printf_chk|__vprintf_chk|__fprintf_chk|__vfprintf_chk|__dprintf_chk|__assert_fail|__assert_perror_fail|err|errx|warn|warnx|error|gsl_set_error_handler|gsl_set_error_handler_off|gsl_error|rand|srand|random|srandom|drand48|strtok|strerror_r_unused|localtime|gmtime|ctime|asctime|setlocale|setenv|putenv|unsetenv|signal|sigaction|H5Eset_auto1_unused)$'
# nm -A on the archive names the object of each reference.
refs=$($NM -A -u "$ar" 2>/dev/null | awk '{print $1, $NF}' | sed 's/@.*//' | while read -r obj sym; do
    if echo "$sym" | grep -Eq "$forbidden"; then echo "$obj $sym"; fi
done)
if [ -n "$refs" ]; then
    echo "hygiene: forbidden references in library objects:"
    echo "$refs" | sed 's/^/    /'
    fail=1
fi

exported=$($NM -D --defined-only "$so" | awk '{print $NF}' | sed 's/@.*//' | grep -Ev '^hrt_' | grep -Ev "$toolchain")
if [ -n "$exported" ]; then
    echo "hygiene: exported symbols without the hrt_ prefix:"
    echo "$exported" | sed 's/^/    /'
    fail=1
fi

n_exp=$($NM -D --defined-only "$so" | grep -c ' hrt_')
n_obj=$($NM -A "$ar" 2>/dev/null | cut -d: -f2 | sort -u | wc -l)
[ "$n_exp" -gt 50 ] || { echo "hygiene: only $n_exp hrt_ symbols exported: wrong library?"; fail=1; }
echo "hygiene: $n_exp hrt_ symbols exported, $n_obj objects checked for forbidden references"
exit $fail
