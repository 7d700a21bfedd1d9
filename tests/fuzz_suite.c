/* fuzz_suite.c — libFuzzer target for the suite reader and validator (dm_suite_parse).
 *
 * Built only with -DDM_FUZZ=ON and clang (CMakeLists.txt); run with the seed corpus in
 * tests/fuzz_corpus/ (tests/ci_extra.sh does, for 60 s). Any input must either parse or
 * be refused with one DM_EINPUT line "FILE:LINE:COLUMN: ..." (or "command line: ..." for the
 * output override); a crash, a sanitizer report, a leak, a multi-line message or any
 * other status is a finding. */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* Says which rule broke, and the message, before aborting: the fuzzer's report then
 * shows what was wrong, not only where. */
static void finding(const char *rule, const dm_error *err)
{
    fprintf(stderr, "fuzz_suite: %s\nmessage: %s\n", rule, err ? err->msg : "(none)");
    abort();
}

/* The output override must name a file in an existing, writable directory, so the
 * output check passes and the fuzzer reaches the expansion behind it. */
#define FUZZ_OUTPUT "/tmp/fuzz-out.h5"
#define FUZZ_SOURCE "fuzz.yaml"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    /* formula problems are evaluated, not compiled: a compiler run per input would take
     * the fuzzer's time (the formula reader is the same either way) */
    setenv("DRIFTMARK_FORMULA_CC", "", 0);
    dm_suite suite;
    dm_error err;
    dm_status st = dm_suite_parse(&suite, (const char *)data, size, FUZZ_SOURCE, FUZZ_OUTPUT,
                                  &err);
    if (st == DM_OK) {
        /* A valid suite: every run has an id, a hash and a method, and its sweeps point
         * at runs that exist. */
        if (suite.n_runs == 0 || suite.runs == NULL)
            finding("a valid suite with no runs", NULL);
        for (size_t i = 0; i < suite.n_runs; i++) {
            const dm_run_spec *r = &suite.runs[i];
            if (r->id[0] == '\0' || strlen(r->hash) != 16 || r->method == NULL ||
                !(r->t_end > 0.0))
                finding("a run without id, hash, method or horizon", NULL);
        }
        for (size_t w = 0; w < suite.n_sweeps; w++)
            for (size_t k = 0; k < suite.sweeps[w].n_runs; k++)
                if (suite.sweeps[w].runs[k] >= suite.n_runs)
                    finding("a sweep naming a run that does not exist", NULL);
        if (strcmp(suite.output, FUZZ_OUTPUT) != 0)
            finding("the output override was not applied", NULL);
    } else {
        /* A refusal: DM_EINPUT (or DM_ENOMEM), one line, naming where. */
        if (st != DM_EINPUT && st != DM_ENOMEM)
            finding("a refusal that is not DM_EINPUT or DM_ENOMEM", &err);
        if (strchr(err.msg, '\n') != NULL || strchr(err.msg, '\r') != NULL)
            finding("an error message of more than one line", &err);
        if (st == DM_EINPUT && strncmp(err.msg, FUZZ_SOURCE ":", strlen(FUZZ_SOURCE) + 1) != 0 &&
            strncmp(err.msg, "command line: ", 14) != 0)
            finding("an error message that does not start with FILE: (or command line:)", &err);
        if (suite.runs != NULL || suite.text != NULL || suite.n_runs != 0)
            finding("a refused suite that is not left empty", &err);
    }
    dm_suite_free(&suite);
    return 0;
}
