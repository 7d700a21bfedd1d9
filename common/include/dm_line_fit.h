/* dm_line_fit.h — the one least-squares line: points added one at a time, with running
 * means (Welford's updates) so the sums never cancel, whatever the offset of x and y.
 * Used for the per-run drift and phase slopes and the per-sweep log-log orders. */
#ifndef DM_LINE_FIT_H
#define DM_LINE_FIT_H

typedef struct dm_line_fit {
    double n, mean_x, mean_y, sxx, sxy, syy;
} dm_line_fit;

/* A zeroed dm_line_fit is an empty fit. */
void dm_line_fit_add(dm_line_fit *f, double x, double y);

/* The slope, or NaN with fewer than 2 points or all x equal. */
double dm_line_fit_slope(const dm_line_fit *f);

/* The line's value at x (NaN where the slope is). */
double dm_line_fit_at(const dm_line_fit *f, double x);

/* The root mean square of the residuals y - line(x) (NaN with fewer than 2 points): the
 * fit's quality in the units of y. */
double dm_line_fit_rms_residual(const dm_line_fit *f);

#endif
