/* fit_access.c -- the accessors of bl_fit that the diagnostics and the comparer read a fit
   through (declared in the last block of fit.h): the one place outside the fitting layer
   that sees the inside of a fit. */
#include "fit.h"
#include "fit_impl.h"

size_t bl_fit_n (const bl_fit *f) { return f->n; }
size_t bl_fit_p (const bl_fit *f) { return f->p; }
const double *bl_fit_cov_unscaled (const bl_fit *f) { return f->cov_unscaled; }

const double *
bl_fit_y_original (const bl_fit *f)
{
  return f->y_own && f->tr.kind != BL_TRANSFORM_NONE ? bl_design_y (f->d) : f->y;
}
