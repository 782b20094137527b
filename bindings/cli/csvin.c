/* Reading CSV input (RFC 4180 quoting, '#' comment lines, blank lines skipped). */
#include <errno.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "cli.h"

typedef struct strbuf { char *s; size_t n, cap; } strbuf;

static void sb_add(strbuf *b, char ch)
{
    if (b->n + 1 >= b->cap) {
        b->cap = b->cap ? 2 * b->cap : 64;
        b->s = xrealloc(b->s, b->cap);
    }
    b->s[b->n++] = ch;
    b->s[b->n] = '\0';
}

static char *trim_dup(const char *s, size_t n)
{
    while (n && (*s == ' ' || *s == '\t')) s++, n--;
    while (n && (s[n - 1] == ' ' || s[n - 1] == '\t')) n--;
    char *p = xmalloc(n + 1);
    memcpy(p, s, n);
    p[n] = '\0';
    return p;
}

static void free_fields(char **f, size_t n)
{
    for (size_t i = 0; i < n; i++) free(f[i]);
    free(f);
}

/* The rest of a quoted field, up to its closing quote ("" inside is one quote): 0, or -1 when the
 * file ends first. */
static int read_quoted(FILE *f, strbuf *cur, long *line)
{
    for (;;) {
        int ch = getc(f);
        if (ch == EOF) return -1;
        if (ch == '"') {
            int nx = getc(f);
            if (nx != '"') {
                if (nx != EOF) ungetc(nx, f);
                return 0;
            }
        } else if (ch == '\n') {
            (*line)++;
        }
        sb_add(cur, (char)ch);
    }
}

/* Read one record; returns the number of fields, 0 at end of file, -1 on an open quote. */
static long read_record(FILE *f, char ***fields, long *line)
{
    strbuf cur = {0};
    size_t nf = 0, cap = 0;
    char **out = NULL;
    int ch, any = 0, quoted = 0;
    for (;;) {
        ch = getc(f);
        if (ch == EOF && !any && cur.n == 0 && nf == 0) {
            free(cur.s);
            return 0;
        }
        any = 1;
        if (ch == '"' && (cur.n == 0 || strspn(cur.s, " \t") == cur.n)) {
            cur.n = 0; /* blanks before the opening quote do not count */
            if (cur.s) cur.s[0] = '\0';
            quoted = 1;
            if (read_quoted(f, &cur, line) == 0) continue;
            free(cur.s);
            free_fields(out, nf);
            return -1;
        }
        if (ch == ',' || ch == '\n' || ch == EOF) {
            if (nf == cap) {
                cap = cap ? 2 * cap : 8;
                out = xrealloc(out, cap * sizeof *out);
            }
            out[nf++] = quoted ? xstrdup(cur.s ? cur.s : "") : trim_dup(cur.s ? cur.s : "", cur.n);
            cur.n = 0;
            if (cur.s) cur.s[0] = '\0';
            quoted = 0;
            if (ch != ',') {
                (*line)++;
                break;
            }
            continue;
        }
        if (ch != '\r') sb_add(&cur, (char)ch);
    }
    free(cur.s);
    *fields = out;
    return (long)nf;
}

int csv_read(const cli *c, const char *path, csvfile *out)
{
    FILE *f = strcmp(path, "-") == 0 ? stdin : fopen(path, "r");
    const char *shown = csv_shown(path);
    long line = 1;
    size_t cap = 0;
    memset(out, 0, sizeof *out);
    if (!f) return cli_fail(c, CLI_EXIT_FILE, "cannot read '%s': %s", path, strerror(errno));
    for (;;) {
        char **fields = NULL;
        long start = line;
        long nf = read_record(f, &fields, &line);
        if (nf == 0) break;
        if (nf < 0) {
            if (f != stdin) fclose(f);
            csv_free(out);
            return cli_fail(c, CLI_EXIT_FILE, "%s line %ld: unterminated quoted field", shown, start);
        }
        if ((nf == 1 && fields[0][0] == '\0') || fields[0][0] == '#') {
            free_fields(fields, (size_t)nf);
            continue;
        }
        if (!out->head) {
            out->head = fields;
            out->ncol = (size_t)nf;
            continue;
        }
        if ((size_t)nf != out->ncol) {
            size_t ncol = out->ncol;
            free_fields(fields, (size_t)nf);
            if (f != stdin) fclose(f);
            csv_free(out);
            return cli_fail(c, CLI_EXIT_FILE, "%s line %ld: %ld fields, but the header has %zu", shown, start, nf,
                            ncol);
        }
        if (out->nrow == cap) {
            cap = cap ? 2 * cap : 64;
            out->rows = xrealloc(out->rows, cap * sizeof *out->rows);
            out->line = xrealloc(out->line, cap * sizeof *out->line);
        }
        out->rows[out->nrow] = fields;
        out->line[out->nrow++] = start;
    }
    if (ferror(f)) {
        int e = errno;
        if (f != stdin) fclose(f);
        csv_free(out);
        return cli_fail(c, CLI_EXIT_FILE, "cannot read '%s': %s", shown, strerror(e));
    }
    if (f != stdin) fclose(f);
    if (!out->head) return cli_fail(c, CLI_EXIT_FILE, "%s: no header line (CSV needs column names)", shown);
    return 0;
}

void csv_free(csvfile *f)
{
    for (size_t r = 0; r < f->nrow; r++) free_fields(f->rows[r], f->ncol);
    if (f->head) free_fields(f->head, f->ncol);
    free(f->rows);
    free(f->line);
    memset(f, 0, sizeof *f);
}

long csv_column(const csvfile *f, const char *name)
{
    for (size_t c = 0; c < f->ncol; c++)
        if (strcmp(f->head[c], name) == 0) return (long)c;
    return -1;
}

static int check_header(const cli *c, const csvfile *f, const char *shown, const csvnames *names)
{
    for (size_t k = 0; k < f->ncol; k++) {
        const char *h = f->head[k];
        for (const char *const *n = names->known; *n; n++)
            if (strcmp(h, *n) != 0 && strcasecmp(h, *n) == 0)
                return cli_fail(c, names->exit_code,
                                "%s: column '%s' is spelled '%s' (names are case-sensitive; the columns are %s)", shown, h,
                                *n, names->expected);
        for (const char *const *o = names->old; o && *o; o += 2)
            if (strcmp(h, o[0]) == 0)
                return cli_fail(c, names->exit_code, "%s: column '%s' is now called '%s' (the columns are %s)", shown, h,
                                o[1], names->expected);
    }
    return 0;
}

const char *csv_shown(const char *path)
{
    return strcmp(path, "-") == 0 ? "standard input" : path;
}

int csv_read_named(const cli *c, const char *path, const csvnames *names, csvfile *out)
{
    int rc = csv_read(c, path, out);
    if (rc == 0 && (rc = check_header(c, out, csv_shown(path), names)) != 0) csv_free(out);
    return rc;
}
