#include <math.h>

#include "dm_line_fit.h"

void dm_line_fit_add(dm_line_fit *f, double x, double y)
{
    f->n += 1.0;
    double dx = x - f->mean_x;
    double dy = y - f->mean_y;
    f->mean_x += dx / f->n;
    f->mean_y += (y - f->mean_y) / f->n;
    f->sxx += dx * (x - f->mean_x);
    f->sxy += dx * (y - f->mean_y);
    f->syy += dy * (y - f->mean_y);
}

double dm_line_fit_slope(const dm_line_fit *f)
{
    return (f->n >= 2.0 && f->sxx > 0.0) ? f->sxy / f->sxx : NAN;
}

double dm_line_fit_at(const dm_line_fit *f, double x)
{
    return f->mean_y + dm_line_fit_slope(f) * (x - f->mean_x);
}

double dm_line_fit_rms_residual(const dm_line_fit *f)
{
    double slope = dm_line_fit_slope(f);
    if (isnan(slope))
        return NAN;
    double ss = f->syy - slope * f->sxy; /* the residual sum of squares */
    return sqrt(fmax(ss, 0.0) / f->n);
}
