/* fit.c -- the dispatcher of the fitting layer: bl_fit_new picks the engine for a model from
   one table, by the family's parameter kind, the response transform and the method, then
   applies the sandwich covariance the options ask for.  The only module that knows every
   engine (fit_engine.h); the engines call down into the core (fit_glm.h) and the result
   layer (fit_impl.h), never back into this file. */
#include <stddef.h>
#include "fit_engine.h"
#include "fit_glm.h"

#define ANY (-1)

/* A plain GLM (OLS included): the core with the design's own response and weights. */
static bl_fit *
glm_run (const bl_design *d, const bl_fit_opts *opt, bl_err *err)
{
  return bl_fit_core (d, NULL, NULL, opt, 0, err);
}

/* The engines in the order they are tried; the first row whose conditions all hold fits the
   model.  PAR is the family's parameter kind (a family without one is BL_FAMPAR_NONE, as is
   a NULL family, the gaussian), TRANSFORM 1 for a transformed response and 0 for none, and
   METHOD a bl_method; ANY matches every value. */
static const struct engine {
  const char *name;
  int par;                        /* bl_family_par, or ANY */
  int transform;                  /* 1, 0 or ANY */
  int method;                     /* bl_method, or ANY */
  bl_fit_engine_fn run;
} engines[] = {
  { "negative-binomial", BL_FAMPAR_THETA, ANY, ANY, bl_fit_negbin_run },
  { "tweedie", BL_FAMPAR_POWER, ANY, ANY, bl_fit_tweedie_run },
  { "transform", BL_FAMPAR_NONE, 1, ANY, bl_fit_transform_run },
  { "wls", BL_FAMPAR_NONE, 0, BL_METHOD_WLS, bl_fit_wls_run },
  { "glm", BL_FAMPAR_NONE, 0, ANY, glm_run },
};

static int
matches (int want, int have)
{
  return want == ANY || want == have;
}

/* The engine for OPT: the first matching row of the table (the last row matches every model
   without a family parameter or a transform, so there is always one). */
static bl_fit_engine_fn
engine_for (const bl_fit_opts *opt)
{
  const int par = opt->fam ? (int) bl_family_par_kind (opt->fam) : (int) BL_FAMPAR_NONE;
  const int tr = opt->transform != BL_TRANSFORM_NONE;
  for (size_t k = 0; k < sizeof engines / sizeof engines[0]; k++)
    if (matches (engines[k].par, par) && matches (engines[k].transform, tr)
        && matches (engines[k].method, (int) opt->method))
      return engines[k].run;
  return glm_run;
}

bl_fit *
bl_fit_new (const bl_design *d, const bl_fit_opts *opt, bl_err *err)
{
  bl_fit *f = engine_for (opt) (d, opt, err);
  if (f && f->st.converged && opt->se == BL_SE_CLUSTER) {
    if (bl_fit_sandwich_cluster (f, bl_design_table (d), opt->cluster_col, err) != BL_OK) {
      bl_fit_free (f);
      return NULL;
    }
  } else if (f && f->st.converged && opt->se != BL_SE_MODEL
      && bl_fit_sandwich (f, opt->se, err) != BL_OK) {
    bl_fit_free (f);
    return NULL;
  }
  return f;
}
