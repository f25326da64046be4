/* fit_glm.h -- the GLM core of the fitting layer (fit_glm.c): one IRLS fit into a bl_fit with
   every summary figure.  Internal: the engines (fit_wls.c, fit_transform.c, fit_negbin.c,
   fit_tweedie.c) call it; it calls only the result layer (fit_impl.h). */
#ifndef BALLAST_FIT_GLM_H
#define BALLAST_FIT_GLM_H
#include "fit_impl.h"

/* Fit by IRLS with response Y and prior weights A (NULL: the design's own), copying them.
   LIGHT skips the null model (for the many fits inside a profile search).  Returns as
   bl_fit_new for a plain GLM. */
/* BL_OK when every y (the design's when Y is NULL) lies in FAM's support; else BL_EDATA at
   the first offending row's FILE:LINE, naming FAM (an engine that starts from another
   family's fit checks the asked family first, so the message names it). */
int bl_fit_check_support (const bl_design *d, const double *y, const bl_family *fam,
                          bl_err *err);
bl_fit *bl_fit_core (const bl_design *d, const double *y, const double *a,
                     const bl_fit_opts *opt, int light, bl_err *err);

#endif
