/* fit_engine.h -- the engines of the fitting layer, one file each, and the sandwich
   covariance.  Internal: only the dispatcher (fit.c) calls these; each engine includes this
   header for its own declaration and calls down into fit_glm.h, never across or up. */
#ifndef BALLAST_FIT_ENGINE_H
#define BALLAST_FIT_ENGINE_H
#include "fit_impl.h"
#include "table.h"

/* An engine: fit the model OPT describes to D, as bl_fit_new documents. */
typedef bl_fit *(*bl_fit_engine_fn) (const bl_design *d, const bl_fit_opts *opt, bl_err *err);

bl_fit *bl_fit_wls_run (const bl_design *d, const bl_fit_opts *opt, bl_err *err);  /* fit_wls.c */
bl_fit *bl_fit_transform_run (const bl_design *d, const bl_fit_opts *opt,
                              bl_err *err);                              /* fit_transform.c */
bl_fit *bl_fit_negbin_run (const bl_design *d, const bl_fit_opts *opt,
                           bl_err *err);                                    /* fit_negbin.c */
bl_fit *bl_fit_tweedie_run (const bl_design *d, const bl_fit_opts *opt,
                            bl_err *err);                                  /* fit_tweedie.c */

/* The sandwich covariances (fit_vcov.c), replacing F's covariance and Wald table. */
int bl_fit_sandwich (bl_fit *f, bl_se_kind kind, bl_err *err);
int bl_fit_sandwich_cluster (bl_fit *f, const bl_table *t, const char *col, bl_err *err);

#endif
