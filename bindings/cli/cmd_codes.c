/* hrtrail codes: hrtrail's phase and remnant codes, keys and names (for
 * reading binary outputs and files that store codes; tracks/FORMAT.md). */
#include <stdlib.h>

#include "cli.h"

static const col code_cols[] = {
    {"kind", "kind", COL_TEXT, NULL, 0},
    {"code", "code", COL_NUM, "%.0f", 0},
    {"key", "key", COL_TEXT, NULL, 0},
    {"name", "name", COL_TEXT, NULL, 0},
};

static int codes_take(cli *c, void *ctx, int id, const char *val)
{
    (void)c;
    (void)ctx;
    (void)id;
    (void)val;
    return 0;
}

static const cmdopts codes_cmdopts = {NULL, NULL, ACCEPT_FORMAT, codes_take, "", 0};

static void add_row(table *t, const char *kind, int code, const char *key, const char *name)
{
    size_t r = table_add_row(t);
    table_text(t, r, 0, kind);
    table_num(t, r, 1, code);
    table_text(t, r, 2, key);
    table_text(t, r, 3, name);
}

int cmd_codes(cli *c, argparse *p)
{
    int rc = cli_parse(c, p, &codes_cmdopts, NULL);
    if (rc != 0)
        return rc;
    table *t = table_new(code_cols, sizeof code_cols / sizeof code_cols[0]);
    for (size_t i = 0; i < HRT_PHASE_N; i++) {
        int code = hrt_phase_code(i);
        add_row(t, "phase", code, hrt_phase_key(code), hrt_phase_name(code));
    }
    for (size_t i = 0; i < HRT_REMNANT_N; i++) {
        int code = hrt_remnant_code(i);
        add_row(t, "remnant", code, hrt_remnant_key(code), hrt_remnant_name(code));
    }
    if (!out_records(c, t))
        table_write_text(t, stdout, NULL);
    table_free(t);
    return 0;
}
