/* fit_impl.h -- the inside of bl_fit, shared by the engines that fill it (fit.c, wls.c,
   transform.c, vcov.c).  Not installed: callers see only fit.h. */
#ifndef BALLAST_FIT_IMPL_H
#define BALLAST_FIT_IMPL_H
#include "fit.h"

struct bl_fit {
  const bl_design *d;
  const bl_family *fam;
  const bl_link *link;
  bl_method method;
  bl_fit_stats st;
  bl_err status;
  bl_warnings warn;
  size_t n, p;
  const double *y, *a;       /* the response and prior weights fitted (design's or own) */
  double *y_own, *a_own;
  double *beta, *se, *wald, *pval, *lo, *hi, *cov, *mu, *eta;
  double *cov_unscaled;      /* (X'WX)^-1 at the fit, p x p; aliased rows/columns 0 */
  double *w;                 /* working weights at the fit, length n */
  int *aliased;
  double fam_par;            /* negative binomial theta or Tweedie power (else 0) */
  bl_fit_transform_info tr;
  bl_fit_variance_info var;
  double *prof_lambda, *prof_loglik;   /* Box-Cox profile points */
};

/* Fit by IRLS with response Y and prior weights A (NULL: the design's own), copying them.
   LIGHT skips the null model (for the many fits inside a profile search).  Returns as
   bl_fit_glm for a plain GLM. */
bl_fit *bl_fit_core (const bl_design *d, const double *y, const double *a,
                     const bl_fit_opts *opt, int light, bl_err *err);

/* Set the log-likelihood and parameter count, and recompute AIC, AICc and BIC from them. */
void bl_fit_set_loglik (bl_fit *f, double loglik, size_t k);

/* Recompute se, wald, p, lo and hi from f->cov (after it was replaced). */
void bl_fit_wald_table (bl_fit *f);

/* The engines (wls.c, transform.c) and the sandwich covariance (vcov.c). */
bl_fit *bl_fit_wls_run (const bl_design *d, const bl_fit_opts *opt, bl_err *err);
bl_fit *bl_fit_transform_run (const bl_design *d, const bl_fit_opts *opt, bl_err *err);
bl_fit *bl_fit_negbin_run (const bl_design *d, const bl_fit_opts *opt, bl_err *err);
bl_fit *bl_fit_tweedie_run (const bl_design *d, const bl_fit_opts *opt, bl_err *err);
int bl_fit_sandwich (bl_fit *f, bl_se_kind kind, bl_err *err);
int bl_fit_sandwich_cluster (bl_fit *f, const bl_table *t, const char *col, bl_err *err);

#endif
