/* test_figures.c — the list of a run's figures (run_figures.h) against the file
 * contract (results/README.md): the /summary table and the table of what a run measured
 * must name exactly the list's fields, in its order, with their types and meanings, so
 * the documentation cannot drift from the program. Also the list's own consistency. */
#include "dm_test_util.h"

#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness.h"

#define README DM_SOURCE_DIR "/results/README.md"
#define SUMMARY_HEADING "## `/summary`"
#define MEASURED_PARAGRAPH "Attributes of what the run measured"

static char *read_text(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return NULL;
    fseek(f, 0, SEEK_END);
    long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    char *text = n >= 0 ? malloc((size_t)n + 1) : NULL;
    if (text != NULL && fread(text, 1, (size_t)n, f) != (size_t)n) {
        free(text);
        text = NULL;
    }
    if (text != NULL)
        text[n] = '\0';
    fclose(f);
    return text;
}

/* A documented row: its three cells, the markdown taken off (backticks dropped, "\|"
 * read as "|"). */
typedef struct doc_row {
    char name[96], type[32], meaning[256];
} doc_row;

static void plain_cell(char *out, size_t size, const char *from, const char *to)
{
    while (from < to && *from == ' ')
        from++;
    while (to > from && to[-1] == ' ')
        to--;
    size_t n = 0;
    for (const char *s = from; s < to && n + 1 < size; s++) {
        if (*s == '`')
            continue;
        if (*s == '\\' && s + 1 < to && s[1] == '|')
            continue;
        out[n++] = *s;
    }
    out[n] = '\0';
}

/* The rows of the first table after the first line starting with `marker`; -1 when
 * there is no such line or table. A cell boundary is a '|' not preceded by '\'. */
static int doc_table(const char *text, const char *marker, doc_row *rows, int max)
{
    const char *at = text;
    while (at != NULL && strncmp(at, marker, strlen(marker)) != 0) {
        at = strchr(at, '\n');
        at = at ? at + 1 : NULL;
    }
    if (at == NULL)
        return -1;
    while (*at != '\0' && *at != '|') { /* on to the table's header line */
        const char *end = strchr(at, '\n');
        at = end ? end + 1 : at + strlen(at);
    }
    int n = -2; /* the header and its --- line come first */
    while (*at == '|') {
        const char *end = strchr(at, '\n');
        end = end ? end : at + strlen(at);
        const char *cut[4];
        int cells = 0;
        for (const char *s = at + 1; s < end && cells < 4; s++)
            if (*s == '|' && s[-1] != '\\')
                cut[cells++] = s;
        if (n >= 0 && n < max && cells >= 3) {
            plain_cell(rows[n].name, sizeof rows[n].name, at + 1, cut[0]);
            plain_cell(rows[n].type, sizeof rows[n].type, cut[0] + 1, cut[1]);
            plain_cell(rows[n].meaning, sizeof rows[n].meaning, cut[1] + 1, cut[2]);
        }
        n++;
        at = *end ? end + 1 : end;
    }
    return n < 0 ? -1 : n;
}

/* A figure as the contract must show it. */
static void expected(const dm_figure *f, bool summary, doc_row *want)
{
    snprintf(want->name, sizeof want->name, "%s", f->name);
    switch (f->kind) {
    case DM_FIGURE_REAL: snprintf(want->type, sizeof want->type, "double"); break;
    case DM_FIGURE_COUNT: snprintf(want->type, sizeof want->type, "uint64"); break;
    case DM_FIGURE_INT: snprintf(want->type, sizeof want->type, "int32"); break;
    case DM_FIGURE_PER_INVARIANT:
        dm_figure_invariant_name(want->name, sizeof want->name, "<invariant>");
        snprintf(want->type, sizeof want->type, "double");
        break;
    default: /* the texts */
        if (summary)
            snprintf(want->type, sizeof want->type, "text (%zu)", f->width);
        else
            snprintf(want->type, sizeof want->type, "text");
        break;
    }
    snprintf(want->meaning, sizeof want->meaning, "%s", f->meaning);
}

/* Compares a documented table with the figures; the first difference into `why`
 * (empty when none). */
static void compare(const char *text, const char *marker, const dm_figure *const *figs,
                    size_t n, bool summary, char *why, size_t why_size)
{
    doc_row rows[DM_SUMMARY_COLUMNS_MAX];
    int got = doc_table(text, marker, rows, DM_SUMMARY_COLUMNS_MAX);
    why[0] = '\0';
    if (got < 0) {
        snprintf(why, why_size, "no table after a line starting \"%s\"", marker);
        return;
    }
    for (size_t i = 0; i < n || i < (size_t)got; i++) {
        doc_row want = { "", "", "" };
        if (i < n)
            expected(figs[i], summary, &want);
        const doc_row *have = i < (size_t)got ? &rows[i] : &(doc_row){ "", "", "" };
        if (strcmp(want.name, have->name) != 0 || strcmp(want.type, have->type) != 0 ||
            strcmp(want.meaning, have->meaning) != 0) {
            snprintf(why, why_size,
                     "%s, row %zu: the list has\n  %s | %s | %s\nthe README has\n  %s | %s | %s",
                     marker, i + 1, want.name, want.type, want.meaning, have->name, have->type,
                     have->meaning);
            return;
        }
    }
}

static size_t run_attributes(const dm_figure **figs)
{
    size_t n = 0;
    for (size_t i = 0; i < dm_n_run_figures; i++)
        if (dm_run_figures[i].in & DM_FIGURE_IN_RUN)
            figs[n++] = &dm_run_figures[i];
    return n;
}

static void check_readme(const char *text, char *why, size_t why_size)
{
    const dm_figure *figs[DM_SUMMARY_COLUMNS_MAX];
    size_t n = dm_summary_columns(figs);
    compare(text, SUMMARY_HEADING, figs, n, true, why, why_size);
    if (why[0] != '\0')
        return;
    n = run_attributes(figs);
    compare(text, MEASURED_PARAGRAPH, figs, n, false, why, why_size);
}

/* ---- tests ---- */

static void readme_lists_exactly_the_figures(void **state)
{
    char *text = read_text(README);
    assert_non_null(text);
    char why[1024];
    check_readme(text, why, sizeof why);
    if (why[0] != '\0')
        fail_msg("results/README.md and harness/include/run_figures.h differ: %s", why);
    free(text);
}

/* The check itself can fail: a README with a wrong type, a dropped row or an extra
 * row is caught. */
static void a_drifted_readme_is_caught(void **state)
{
    char *text = read_text(README);
    assert_non_null(text);
    char why[1024];
    const char *edits[][2] = {
        { "| `steps` | uint64 | steps taken |", "| `steps` | double | steps taken |" },
        { "| `final_energy_error` | double | dE at the end |\n", "" },
        { "| `t_reached` | double | time of the last step taken |\n",
          "| `t_reached` | double | time of the last step taken |\n| `extra` | double | x |\n" },
    };
    for (size_t k = 0; k < sizeof edits / sizeof edits[0]; k++) {
        char *at = strstr(text, edits[k][0]);
        assert_non_null(at);
        size_t a = strlen(edits[k][0]), b = strlen(edits[k][1]);
        char *copy = malloc(strlen(text) + b + 1);
        assert_non_null(copy);
        memcpy(copy, text, (size_t)(at - text));
        memcpy(copy + (at - text), edits[k][1], b);
        strcpy(copy + (at - text) + b, at + a);
        check_readme(copy, why, sizeof why);
        assert_true(why[0] != '\0');
        free(copy);
    }
    free(text);
}

/* Names are unique where they meet (one /summary, one group of attributes), every
 * /summary figure has its field and texts their width. */
static void the_list_is_consistent(void **state)
{
    const dm_figure *figs[DM_SUMMARY_COLUMNS_MAX];
    size_t lists[2] = { dm_summary_columns(figs), 0 };
    for (size_t i = 0; i < lists[0]; i++) {
        assert_true(figs[i]->row_at != DM_FIGURE_NOWHERE);
        if (figs[i]->kind == DM_FIGURE_TEXT || figs[i]->kind == DM_FIGURE_STATUS)
            assert_true(figs[i]->width > 1);
        for (size_t j = 0; j < i; j++)
            if (strcmp(figs[i]->name, figs[j]->name) == 0)
                fail_msg("/summary has two fields %s", figs[i]->name);
    }
    lists[1] = run_attributes(figs);
    for (size_t i = 0; i < lists[1]; i++)
        for (size_t j = 0; j < i; j++)
            if (strcmp(figs[i]->name, figs[j]->name) == 0)
                fail_msg("a run's group has two attributes %s", figs[i]->name);
    /* every figure lands somewhere */
    for (size_t i = 0; i < dm_n_run_figures; i++)
        assert_true(dm_run_figures[i].in != 0);
    /* the CSV header is the /summary columns */
    char *buf = NULL;
    size_t size = 0;
    FILE *out = open_memstream(&buf, &size);
    assert_non_null(out);
    dm_table_print(out, NULL, 0, DM_TABLE_CSV);
    fclose(out);
    size_t n = dm_summary_columns(figs);
    char want[4096] = "";
    for (size_t i = 0; i < n; i++) {
        strcat(want, i ? "," : "");
        strcat(want, figs[i]->name);
    }
    strcat(want, "\n");
    assert_string_equal(buf, want);
    free(buf);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(readme_lists_exactly_the_figures),
        cmocka_unit_test(a_drifted_readme_is_caught),
        cmocka_unit_test(the_list_is_consistent),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
