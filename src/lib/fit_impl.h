/* fit_impl.h -- the inside of bl_fit and the result layer's setters (fit_result.c), shared by
   the modules that fill or read it.  Not installed: callers see only fit.h.

   The fitting layer is a DAG, each header naming one layer:
     fit.c (dispatcher) -> fit_engine.h: fit_wls.c, fit_transform.c, fit_negbin.c,
       fit_tweedie.c, fit_vcov.c -> fit_glm.h: fit_glm.c (the IRLS core) -> fit_impl.h:
       fit_result.c
   An engine includes fit_engine.h for its own declaration and fit_glm.h for the core; it
   calls no other engine, and nothing below the dispatcher calls up into it.  The sandwich
   covariance (fit_vcov.c) is reached from the dispatcher and calls only the result layer. */
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
  double *log10p;                 /* log10 of each pval, from the log-space tail */
  double *cov_unscaled;      /* (X'WX)^-1 at the fit, p x p; aliased rows/columns 0 */
  double *w;                 /* working weights at the fit, length n */
  int *aliased;
  double fam_par;            /* negative binomial theta or Tweedie power (else 0) */
  bl_fit_transform_info tr;
  bl_fit_variance_info var;
  double *prof_lambda, *prof_loglik;   /* Box-Cox profile points */
};

/* ---- The result layer (fit_result.c), below every engine. */

/* A new result for design D with response Y and prior weights A (NULL: the design's own,
   else copied), family FAM and link LNK, every table allocated.  NULL with ERR set
   (BL_ENOMEM) when memory runs out. */
bl_fit *bl_fit_result_new (const bl_design *d, const double *y, const double *a,
                           const bl_fit_opts *opt, const bl_family *fam, const bl_link *lnk,
                           bl_err *err);

/* Set the log-likelihood and parameter count, and recompute AIC, AICc and BIC from them. */
void bl_fit_set_loglik (bl_fit *f, double loglik, size_t k);

/* Recompute se, wald, p, lo and hi from f->cov (after it was replaced). */
void bl_fit_wald_table (bl_fit *f);

#endif
