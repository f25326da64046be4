/* fit.h -- bl_fit, the one result type of every fitting method, and the GLM/OLS fitter. */
#ifndef BALLAST_FIT_H
#define BALLAST_FIT_H
#include <stddef.h>
#include "design.h"
#include "error.h"
#include "family.h"
#include "irls.h"
#include "link.h"
#ifdef __cplusplus
extern "C" {
#endif

typedef enum bl_method { BL_METHOD_GLM = 0, BL_METHOD_OLS } bl_method;

#define BL_FIT_LEVEL 0.95
#define BL_FIT_OVERDISPERSION 1.5   /* Pearson chi2 / dof above this: warn (common practice) */

typedef struct bl_fit_opts {
  bl_method method;               /* BL_METHOD_GLM */
  const bl_family *fam;           /* NULL: gaussian */
  const bl_link *link;            /* NULL: the family's default link */
  double level;                   /* confidence level of the intervals, BL_FIT_LEVEL */
  int dispersion_pearson;         /* poisson: scale the covariance by the Pearson estimate */
  bl_irls_opts irls;
} bl_fit_opts;

void bl_fit_opts_init (bl_fit_opts *opt);

typedef struct bl_fit bl_fit;     /* opaque; defined in fit.c */

/* Summary figures of a fit.  A figure that does not exist is NAN, with its reason in the
   matching *_why string (otherwise ""). */
typedef struct bl_fit_stats {
  size_t n, p, rank, dof_resid, dof_null, iterations, halvings, k;
  int converged;                  /* 1 when the fit converged */
  int perfect;                    /* 1: zero residual variance */
  int wald_is_t;                  /* 1: t statistics on dof_resid; 0: normal z */
  double level;
  double deviance, deviance_null, pearson, phi_pearson, phi_ml, phi_used;
  double loglik, aic, aicc, bic;
  const char *deviance_null_why, *loglik_why, *aicc_why, *phi_ml_why;
  const char *solver;             /* "qr-extended" or "qr-streamed" */
  const char *se_kind;            /* "model" or "pearson" */
} bl_fit_stats;

/* Fit a GLM (or OLS) to the rows and columns of D.

   Returns NULL with ERR filled for problems found before fitting: BL_EDATA when y is outside
   the family's support (where = "FILE:LINE" of the first such row, and the message counts
   them), BL_ESPEC for an invalid combination of options, BL_ENOMEM.  Otherwise returns a fit;
   when IRLS did not converge or diverged the fit's status (bl_fit_status) holds the error and
   the stats have converged = 0 and no coefficients to stand behind.  D must outlive the fit. */
bl_fit *bl_fit_glm (const bl_design *d, const bl_fit_opts *opt, bl_err *err);
void bl_fit_free (bl_fit *fit);

/* The fit's status: BL_OK, or the error that stopped it (ENOCONV, ECANCEL) with its message. */
const bl_err *bl_fit_status (const bl_fit *fit);
const bl_fit_stats *bl_fit_stats_get (const bl_fit *fit);
const bl_warnings *bl_fit_warnings (const bl_fit *fit);
const bl_design *bl_fit_design (const bl_fit *fit);
const bl_family *bl_fit_family (const bl_fit *fit);
const bl_link *bl_fit_link (const bl_fit *fit);
bl_method bl_fit_method (const bl_fit *fit);
const char *bl_method_name (bl_method m);

/* Coefficient table, length p each, valid until bl_fit_free.  Aliased and non-existent
   entries are NAN. */
const double *bl_fit_beta (const bl_fit *fit);
const double *bl_fit_se (const bl_fit *fit);
const double *bl_fit_wald (const bl_fit *fit);
const double *bl_fit_pvalue (const bl_fit *fit);
const double *bl_fit_lo (const bl_fit *fit);
const double *bl_fit_hi (const bl_fit *fit);
const int *bl_fit_aliased (const bl_fit *fit);
/* Covariance matrix (p x p column-major; aliased rows/columns NAN), the factor times phi_used. */
const double *bl_fit_cov (const bl_fit *fit);
/* Fitted means and linear predictors over the design's rows (length n). */
const double *bl_fit_mu (const bl_fit *fit);
const double *bl_fit_eta (const bl_fit *fit);

#ifdef __cplusplus
}
#endif
#endif
