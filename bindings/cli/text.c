/*
 * Text that comes from files and users (grid attributes, names in a CSV, file names), made safe
 * for a terminal: no control character reaches it, and bytes that are not UTF-8 are shown as
 * what they are.  JSON and SVG have their own escapes (out.c, svg.c) on the same decoder.
 */
#include <stdlib.h>
#include <string.h>

#include "cli.h"

size_t utf8_decode(const unsigned char *s, uint32_t *cp)
{
    unsigned char b = s[0];
    size_t n;
    uint32_t v, min;
    if (b < 0x80) {
        *cp = b;
        return 1;
    }
    if (b >= 0xc2 && b <= 0xdf)
        n = 2, v = b & 0x1fu, min = 0x80;
    else if (b >= 0xe0 && b <= 0xef)
        n = 3, v = b & 0x0fu, min = 0x800;
    else if (b >= 0xf0 && b <= 0xf4)
        n = 4, v = b & 0x07u, min = 0x10000;
    else
        return 0;
    for (size_t i = 1; i < n; i++) {
        if ((s[i] & 0xc0) != 0x80) return 0; /* also at the terminating NUL */
        v = (v << 6) | (s[i] & 0x3fu);
    }
    if (v < min || v > 0x10ffff || (v >= 0xd800 && v <= 0xdfff)) return 0;
    *cp = v;
    return n;
}

/* s with escapes into dst (at most cap bytes with the NUL, whole pieces only); the length of all of it. */
static size_t escape_into(char *dst, size_t cap, const char *s, int *bad_utf8)
{
    const unsigned char *p = (const unsigned char *)s;
    size_t n = 0, used = 0;
    int full = 0;
    while (*p) {
        uint32_t cp = 0;
        size_t k = utf8_decode(p, &cp), len = k;
        char esc[8];
        const char *piece = (const char *)p;
        if (k == 0) { /* a byte that is not UTF-8 */
            snprintf(esc, sizeof esc, "\\x%02x", *p);
            k = 1;
            if (bad_utf8) *bad_utf8 = 1;
        } else if (cp < 0x20 || cp == 0x7f) { /* C0 controls and DEL: escape, bell, backspace, ... */
            snprintf(esc, sizeof esc, "\\x%02x", (unsigned)cp);
        } else if (cp >= 0x80 && cp < 0xa0) { /* C1 controls (U+009B opens a terminal command) */
            snprintf(esc, sizeof esc, "\\u%04x", (unsigned)cp);
        } else {
            esc[0] = '\0';
        }
        if (esc[0]) piece = esc, len = strlen(esc);
        if (!full && used + len < cap) {
            memcpy(dst + used, piece, len);
            used += len;
        } else {
            full = 1;
        }
        n += len;
        p += k;
    }
    if (cap) dst[used] = '\0';
    return n;
}

char *text_safe(const char *s, int *bad_utf8)
{
    if (bad_utf8) *bad_utf8 = 0;
    if (!s) s = "";
    size_t n = escape_into(NULL, 0, s, bad_utf8);
    char *out = xmalloc(n + 1);
    escape_into(out, n + 1, s, NULL);
    return out;
}

void text_write(FILE *f, const char *s)
{
    char *safe = text_safe(s, NULL);
    fputs(safe, f);
    free(safe);
}
