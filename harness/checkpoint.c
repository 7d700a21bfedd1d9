/* checkpoint.c — the checkpoint record of an interrupted run and its one dataset.
 *
 * The record is a fixed layout of 64-bit words (results/README.md): a header of counts,
 * the doubles by their bits (so nothing is rounded), then the stepper's own words. One
 * function, transfer(), walks the layout in both directions, so the writer and the
 * reader cannot disagree. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "checkpoint.h"

/* The header: 12 words in layout 2, 13 in layout 3 (word 12: the times continued). */
#define HEADER_WORDS(VERSION) ((VERSION) >= 3 ? 13 : 12)
/* header, t, V, wall, x, monitor (5), max |dE|, two fits (5 each), last phase,
 * invariants, then the stepper's words */
#define FIXED_WORDS(DOF, VERSION)                                                          \
    (HEADER_WORDS(VERSION) + 3 + 2 * (DOF) + 5 + 1 + 5 + 1 + 5 + DM_MAX_INVARIANTS)
#define RECORD_MAX (FIXED_WORDS(DM_MAX_DOF, DM_CHECKPOINT_VERSION) + DM_STEPPER_RECORD_MAX)

typedef struct cursor {
    uint64_t *w;
    size_t i;
    bool save;
} cursor;

static void word(cursor *c, uint64_t *v)
{
    if (c->save)
        c->w[c->i] = *v;
    else
        *v = c->w[c->i];
    c->i++;
}

static void real(cursor *c, double *v)
{
    if (c->save)
        c->w[c->i] = dm_word_of_double(*v);
    else
        *v = dm_double_of_word(c->w[c->i]);
    c->i++;
}

static void flag(cursor *c, bool *v)
{
    uint64_t u = *v;
    word(c, &u);
    *v = u != 0;
}

/* The line's sums; its syy (only for the rms residual, which no run figure uses) is not
 * kept. */
static void fit(cursor *c, dm_line_fit *f)
{
    real(c, &f->n);
    real(c, &f->mean_x);
    real(c, &f->mean_y);
    real(c, &f->sxx);
    real(c, &f->sxy);
}

/* The layout, both ways: written in the current layout, read in it or in layout 2
 * (whose runs read as never continued). Returns the words used (the stepper's words
 * last: the caller has checked n_stepper before reading them). */
static size_t transfer(dm_checkpoint *ck, uint64_t *w, bool save, bool header_only)
{
    cursor c = { .w = w, .save = save };
    uint64_t version = DM_CHECKPOINT_VERSION;
    word(&c, &version);
    if (!save && version != 2 && version != DM_CHECKPOINT_VERSION)
        return 0;
    word(&c, &ck->dof);
    word(&c, &ck->bucket);
    flag(&c, &ck->in_bucket);
    word(&c, &ck->k);
    word(&c, &ck->series_n);
    word(&c, &ck->crossings_n);
    word(&c, &ck->crossing_count);
    word(&c, &ck->crossing_stride);
    flag(&c, &ck->monitor.armed);
    word(&c, &ck->n_stepper);
    real(&c, &ck->closest); /* word 11: 0 (reserved) before N-body */
    if (version >= 3)
        word(&c, &ck->times_continued);
    else
        ck->times_continued = 0;
    ck->version = version;
    if (!save && (ck->dof < 1 || ck->dof > DM_MAX_DOF))
        return 0;
    if (header_only)
        return c.i;
    real(&c, &ck->t);
    real(&c, &ck->potential);
    real(&c, &ck->wall_seconds);
    for (uint64_t j = 0; j < 2 * ck->dof; j++)
        real(&c, &ck->x[j]);
    real(&c, &ck->monitor.level);
    real(&c, &ck->monitor.bucket_min);
    real(&c, &ck->monitor.bucket_max);
    real(&c, &ck->monitor.energy_error);
    real(&c, &ck->monitor.crossed_level);
    real(&c, &ck->max_abs);
    fit(&c, &ck->phase_fit);
    real(&c, &ck->last_phase);
    fit(&c, &ck->drift_fit);
    for (int j = 0; j < DM_MAX_INVARIANTS; j++)
        real(&c, &ck->max_invariant_error[j]);
    for (uint64_t j = 0; j < ck->n_stepper; j++)
        word(&c, &ck->stepper[j]);
    return c.i;
}

int dm_checkpoint_write(hid_t group, const dm_checkpoint *ck)
{
    uint64_t words[RECORD_MAX];
    dm_checkpoint copy = *ck;
    hsize_t n = transfer(&copy, words, true, false);
    if (n != FIXED_WORDS(ck->dof, DM_CHECKPOINT_VERSION) + ck->n_stepper)
        return -1; /* the layout and FIXED_WORDS disagree: a bug, caught by the tests */
    hid_t space = H5Screate_simple(1, &n, NULL);
    hid_t d = space >= 0 ? H5Dcreate2(group, "checkpoint", H5T_STD_U64LE, space, H5P_DEFAULT,
                                      H5P_DEFAULT, H5P_DEFAULT)
                         : -1;
    int rc = d >= 0 && H5Dwrite(d, H5T_NATIVE_UINT64, H5S_ALL, H5S_ALL, H5P_DEFAULT, words) >= 0
                 ? 0
                 : -1;
    if (d >= 0 && H5Dclose(d) < 0)
        rc = -1;
    if (space >= 0)
        H5Sclose(space);
    return rc;
}

/* The record fits the run it is read for: the same degrees of freedom, a bucket and a
 * step count inside the run, datasets of the lengths it was taken with, a stepper
 * record that fits. */
static bool fits_run(const dm_checkpoint *ck, size_t n_words, const dm_run_spec *spec,
                     const dm_run_result *r)
{
    size_t header = HEADER_WORDS(ck->version);
    return ck->dof == (uint64_t)spec->inst.dof && ck->bucket < spec->samples &&
           (spec->method->adaptive || ck->k <= dm_run_fixed_steps(spec)) &&
           ck->series_n == r->series.n && ck->series_n <= ck->bucket &&
           ck->crossings_n == r->crossings.n && ck->crossing_stride >= 1 &&
           ck->crossings_n <= ck->crossing_count && ck->n_stepper <= DM_STEPPER_RECORD_MAX &&
           n_words == FIXED_WORDS(ck->dof, ck->version) + ck->n_stepper && n_words > header;
}

int dm_checkpoint_read(hid_t group, const dm_run_spec *spec, const dm_run_result *r,
                       dm_checkpoint **out)
{
    *out = NULL;
    htri_t has = H5Lexists(group, "checkpoint", H5P_DEFAULT);
    if (has == 0)
        return 1;
    if (has < 0)
        return -1;
    hid_t d = H5Dopen2(group, "checkpoint", H5P_DEFAULT);
    if (d < 0)
        return -1;
    hid_t space = H5Dget_space(d), type = H5Dget_type(d);
    hssize_t count = space >= 0 && H5Sget_simple_extent_ndims(space) == 1
                         ? H5Sget_simple_extent_npoints(space)
                         : -1;
    uint64_t words[RECORD_MAX];
    int rc = -1;
    if (type >= 0 && H5Tget_class(type) == H5T_INTEGER && count > HEADER_WORDS(2) &&
        count <= RECORD_MAX &&
        H5Dread(d, H5T_NATIVE_UINT64, H5S_ALL, H5S_ALL, H5P_DEFAULT, words) >= 0)
        rc = 0;
    if (type >= 0)
        H5Tclose(type);
    if (space >= 0)
        H5Sclose(space);
    H5Dclose(d);
    if (rc != 0)
        return -1;
    dm_checkpoint *ck = calloc(1, sizeof *ck);
    if (ck == NULL)
        return -1;
    /* the header first: it says how many stepper words follow. A record of layout 1 is
     * no checkpoint: the run starts again, as in a file from before them. Any other
     * layout than 1 to ours (0, or a newer driftmark's) is damage, not a restart. */
    if (words[0] == 1) {
        free(ck);
        return 1;
    }
    if (words[0] != 2 && words[0] != DM_CHECKPOINT_VERSION) {
        free(ck);
        return -1;
    }
    if (transfer(ck, words, false, true) == 0 || !fits_run(ck, (size_t)count, spec, r)) {
        free(ck);
        return -1;
    }
    transfer(ck, words, false, false);
    *out = ck;
    return 0;
}
