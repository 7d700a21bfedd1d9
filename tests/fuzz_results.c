/* fuzz_results.c — libFuzzer target for the results-file readers: what `show` reads
 * (dm_results_read_summary, dm_results_read_sweeps) and what `run --resume` reads (dm_results_read_suite_text,
 * then the suite stored in the file, then dm_results_read_runs).
 *
 * Built only with -DDM_FUZZ=ON and clang (CMakeLists.txt); tests/ci_extra.sh runs it for
 * 60 s over small valid files it makes first with the same build's driftmark (nothing
 * binary is committed). HDF5 opens files by name, so each input is written to one
 * temporary file of this process. Any input must be read or refused with one line; a
 * crash, a sanitizer report, a leak, a multi-line message or a refusal other than
 * DM_EINPUT (or DM_ENOMEM) is a finding. */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "harness.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static void finding(const char *rule, const dm_error *err)
{
    fprintf(stderr, "fuzz_results: %s\nmessage: %s\n", rule, err ? err->msg : "(none)");
    abort();
}

static void check_refusal(dm_status st, const dm_error *err)
{
    if (st != DM_EINPUT && st != DM_ENOMEM)
        finding("a refusal that is not DM_EINPUT or DM_ENOMEM", err);
    if (strchr(err->msg, '\n') != NULL || strchr(err->msg, '\r') != NULL)
        finding("an error message of more than one line", err);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static char path[128];
    if (path[0] == '\0') {
        const char *dir = getenv("TMPDIR");
        snprintf(path, sizeof path, "%s/fuzz-results-%ld.h5", dir && *dir ? dir : "/tmp",
                 (long)getpid());
    }
    FILE *f = fopen(path, "wb");
    if (f == NULL || fwrite(data, 1, size, f) != size || fclose(f) != 0)
        finding("cannot write the input to a temporary file", NULL);

    dm_error err = { 0 };
    dm_summary_row *rows = NULL;
    size_t n = 0;
    dm_status st = dm_results_read_summary(path, &rows, &n, &err);
    if (st != DM_OK) {
        check_refusal(st, &err);
        if (rows != NULL)
            finding("a refused /summary that left rows allocated", &err);
        return 0;
    }
    if (n > DM_SUITE_MAX_RUNS)
        finding("more rows than a suite can have", NULL);
    free(rows);

    dm_sweep_summary *sweeps = NULL;
    size_t n_sweeps = 0;
    st = dm_results_read_sweeps(path, &sweeps, &n_sweeps, &err);
    if (st != DM_OK) {
        check_refusal(st, &err);
        if (sweeps != NULL)
            finding("refused sweeps left allocated", &err);
    }
    dm_sweep_summaries_free(sweeps, n_sweeps);

    char *text = NULL;
    char source[1024], folder[sizeof source];
    st = dm_results_read_suite_text(path, &text, source, folder, sizeof source, &err);
    if (st != DM_OK) {
        check_refusal(st, &err);
        return 0;
    }
    dm_suite suite;
    st = dm_suite_parse_in(&suite, text, strlen(text), source, folder, path, &err);
    free(text);
    if (st != DM_OK) {
        check_refusal(st, &err);
        return 0;
    }
    dm_run_result *results = calloc(suite.n_runs, sizeof *results);
    if (results != NULL) {
        size_t kept = 0;
        st = dm_results_read_runs(path, &suite, results, NULL, &kept, &err);
        if (st != DM_OK)
            check_refusal(st, &err);
        else if (kept > suite.n_runs)
            finding("more runs kept than the suite has", NULL);
        for (size_t i = 0; i < suite.n_runs; i++)
            dm_run_result_free(&results[i]);
        free(results);
    }
    dm_suite_free(&suite);
    return 0;
}
