/* fit.h -- bl_fit, the one result type of every fitting method, and bl_fit_new, which fits
   every method. */
#ifndef BALLAST_FIT_H
#define BALLAST_FIT_H
#include <signal.h>
#include <stddef.h>
#include "design.h"
#include "error.h"
#include "family.h"
#include "link.h"
#include "table.h"
#include "terms.h"
#ifdef __cplusplus
extern "C" {
#endif

/* ---- The numerical controls of a fit: the least-squares kernel and the IRLS iteration
   (lsq.c and irls.c implement them; they are options of every fit, bl_fit_opts.irls). */
#define BL_LSQ_SMALL_NQ2 4.0e6    /* n q^2 at most this: the extended-precision kernel */
typedef enum bl_solver {
  BL_SOLVER_AUTO = 0,   /* extended when n q^2 <= BL_LSQ_SMALL_NQ2, else streamed */
  BL_SOLVER_EXTENDED,   /* long double Householder QR of the whole matrix */
  BL_SOLVER_STREAMED    /* double Householder updating QR over row blocks */
} bl_solver;

/* Name of a solver as reported in JSON: "qr-extended", "qr-streamed". */
BL_API const char *bl_solver_name (bl_solver s);

#define BL_IRLS_EPSREL 1e-10      /* convergence: |D_old - D| <= eps (|D| + 0.1) */
#define BL_IRLS_MAX_ITER 50
#define BL_IRLS_MAX_HALVINGS 40
/* Convergence also needs the coefficients to have settled: every step at most
   BL_IRLS_EPSBETA_RATIO epsrel (|beta_j| + se_j) (1e-11 at the default epsrel), or no longer
   shrinking (the rounding floor).  The deviance is second order in beta, so its test alone
   stops non-canonical fits about 1e-6 standard errors short of the maximum. */
#define BL_IRLS_EPSBETA_RATIO 0.1
/* This many consecutive steps halved back inside the mean space when max_iter is reached:
   the fit is creeping toward the edge of the parameter space (reported as such). */
#define BL_IRLS_EDGE_STREAK 3
#define BL_IRLS_BLOCK 2048        /* rows per block */
#define BL_IRLS_PARTS 16          /* fixed row partitions (thread-count independent) */

typedef struct bl_irls_opts {
  double epsrel;             /* BL_IRLS_EPSREL */
  size_t max_iter;           /* BL_IRLS_MAX_ITER */
  size_t max_halvings;       /* BL_IRLS_MAX_HALVINGS */
  double rank_tol;           /* BL_LSQ_RANK_TOL */
  bl_solver solver;          /* BL_SOLVER_AUTO */
  unsigned threads;          /* worker threads for the streamed kernel; default 2 */
  volatile sig_atomic_t *cancel;   /* polled once per block; NULL for none */
} bl_irls_opts;

BL_API void bl_irls_opts_init (bl_irls_opts *opt);

typedef enum bl_method { BL_METHOD_GLM = 0, BL_METHOD_OLS, BL_METHOD_WLS } bl_method;

/* Standard errors: model-based, or the heteroscedasticity-consistent sandwich (White 1980,
   Econometrica 48, 817-838; MacKinnon & White 1985, J. Econometrics 29, 305-325). */
typedef enum bl_se_kind {
  BL_SE_MODEL = 0, BL_SE_HC0, BL_SE_HC1, BL_SE_HC2, BL_SE_HC3,
  BL_SE_CLUSTER                 /* summed within clusters (Liang & Zeger 1986) */
} bl_se_kind;

/* A transform of the response for ordinary least squares. */
typedef enum bl_transform {
  BL_TRANSFORM_NONE = 0, BL_TRANSFORM_LOG, BL_TRANSFORM_SQRT, BL_TRANSFORM_BOXCOX
} bl_transform;

/* The variance function of weighted least squares: Var y_i = sigma^2 v_i / a_i with
   v_i = x_i^K (a column) or mu_i^K (the fitted mean). */
typedef enum bl_variance {
  BL_VARIANCE_NONE = 0, BL_VARIANCE_COLUMN, BL_VARIANCE_FITTED
} bl_variance;

#define BL_BOXCOX_MIN (-3.0)
#define BL_BOXCOX_MAX 3.0
#define BL_BOXCOX_GRID 0.1        /* grid step of the profile search */
#define BL_BOXCOX_DIGITS 8        /* fewer significant digits kept by the transformed-scale
                                     residuals than this: a note (fit_transform.c) */
#define BL_WLS_POWER_MIN (-6.0)   /* search range of an estimated variance power */
#define BL_WLS_POWER_MAX 6.0
#define BL_WLS_MAX_ITER 50        /* feasible WLS reweighting steps */

typedef struct bl_fit_transform_info {
  bl_transform kind;
  const char *name;               /* "log", "sqrt", "boxcox"; NULL for none */
  double lambda;                  /* Box-Cox power (NAN for log and sqrt) */
  double lambda_lo, lambda_hi;    /* 95% profile interval; NAN when open */
  double lambda_practical;        /* nearest multiple of 0.5 inside; NAN when none */
  int lambda_estimated;
  int lambda_edge;                /* -1 / +1: the profile's maximum is at the lower / upper
                                     end of [BL_BOXCOX_MIN, BL_BOXCOX_MAX]; 0 inside */
  const char *lambda_lo_why, *lambda_hi_why;  /* why an interval end is NAN, else "" */
  const char *profile_why;        /* why some profile points are -HUGE_VAL (null), else "" */
  int digits_kept;                /* Box-Cox: significant digits of the transformed-scale
                                     residuals y - mu as doubles hold them (17 when no loss) */
  int shift_given;
  double shift;                   /* y + shift was transformed */
  size_t nprofile;                /* profile points (lambda, loglik), for plotting */
  const double *profile_lambda, *profile_loglik;
  /* Duan's smearing sums over the fit's residuals e_i = y_i - mu_i (transformed scale),
     made once with the fit (a prediction then costs O(1) for log and sqrt, not O(n)):
     sum exp(e_i), sum e_i and sum e_i^2 in long double, and the least e_i. */
  long double smear_sum_exp, smear_sum, smear_sum_sq;
  double smear_min;
} bl_fit_transform_info;

typedef struct bl_fit_variance_info {
  bl_variance kind;
  char expr[192];                 /* resolved: "fitted^1.63", "load_pct^2" */
  double power, power_se;         /* power_se NAN when the power was fixed */
  int power_estimated;
  size_t wls_iterations;          /* feasible WLS steps before the likelihood maximization */
} bl_fit_variance_info;

#define BL_FIT_LEVEL 0.95
#define BL_FIT_OVERDISPERSION 1.5   /* Pearson chi2 / dof above this: warn (common practice) */
/* A row with y = 0 whose fitted mean is below this times the mean of y (poisson, negative
   binomial, Tweedie): warn that some coefficients may be running off to infinity. */
#define BL_FIT_MU_VANISH 1e-12

typedef struct bl_fit_opts {
  bl_method method;               /* BL_METHOD_GLM */
  const bl_family *fam;           /* NULL: gaussian */
  const bl_link *link;            /* NULL: the family's default link */
  double level;                   /* confidence level of the intervals, BL_FIT_LEVEL */
  int dispersion_pearson;         /* poisson: scale the covariance by the Pearson estimate */
  bl_se_kind se;                  /* BL_SE_MODEL */
  bl_transform transform;         /* ordinary least squares of a transformed response */
  int lambda_est;                 /* boxcox: estimate lambda (else use lambda) */
  double lambda;
  int shift_given;
  double shift;                   /* transform y + shift */
  bl_variance variance;           /* BL_METHOD_WLS: the variance function (the column is the
                                     design's variance column) */
  const char *variance_col;       /* its name, for the resolved expression ("load_pct^2") */
  const char *cluster_col;        /* BL_SE_CLUSTER: the column that names each row's cluster */
  int power_est;                  /* estimate K (else use power) */
  double power;
  size_t wls_max_iter;            /* BL_WLS_MAX_ITER */
  double fam_par;                 /* negative binomial theta, Tweedie power p (when fixed) */
  int fam_par_est;                /* estimate it (the default for both families) */
  bl_irls_opts irls;
} bl_fit_opts;

BL_API void bl_fit_opts_init (bl_fit_opts *opt);

typedef struct bl_fit bl_fit;     /* opaque; defined in fit_impl.h */

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
  double loglik_transformed;      /* transformed OLS: the normal loglik of h(y); else NAN */
  /* The family's parameter: negative binomial theta (with its standard error) or the
     Tweedie power p (with its 95% profile interval); NAN where it does not apply, or with
     fam_par_why when it ran off (theta to infinity). */
  double fam_par, fam_par_se, fam_par_lo, fam_par_hi;
  int fam_par_est;
  const char *fam_par_why;
  const char *deviance_null_why, *loglik_why, *aicc_why, *phi_ml_why;
  const char *solver;             /* "qr-extended" or "qr-streamed" */
  const char *se_kind;            /* "model", "pearson", "hc0" ... "hc3", "cluster" */
  size_t clusters;                /* BL_SE_CLUSTER: the number of clusters */
  size_t dof_wald;                /* reference dof of every coefficient's t statistic and
                                     interval: dof_resid, or clusters - 1 with cluster
                                     standard errors; 0 when the reference is normal (z) */
} bl_fit_stats;

/* Fit the model OPT describes to the rows and columns of D: a GLM by IRLS, OLS, weighted least
   squares (BL_METHOD_WLS: known weights, or a variance function with its power fixed or
   estimated by maximum likelihood), or OLS of a transformed response (log, sqrt, Box-Cox with
   lambda fixed or estimated), with model or sandwich standard errors.

   Returns NULL with ERR filled for problems found before fitting: BL_EDATA when y is outside
   the family's support (where = "FILE:LINE" of the first such row, and the message counts
   them), BL_ESPEC for an invalid combination of options, BL_ENOMEM.  Otherwise returns a fit;
   when IRLS did not converge or diverged the fit's status (bl_fit_status) holds the error and
   the stats have converged = 0 and no coefficients to stand behind.  D must outlive the fit. */
BL_API bl_fit *bl_fit_new (const bl_design *d, const bl_fit_opts *opt, bl_err *err);
BL_API void bl_fit_free (bl_fit *fit);

/* The fit's status: BL_OK, or the error that stopped it (ENOCONV, ECANCEL) with its message. */
BL_API const bl_err *bl_fit_status (const bl_fit *fit);
BL_API const bl_fit_stats *bl_fit_stats_get (const bl_fit *fit);
BL_API const bl_warnings *bl_fit_warnings (const bl_fit *fit);
BL_API const bl_design *bl_fit_design (const bl_fit *fit);
BL_API const bl_family *bl_fit_family (const bl_fit *fit);
BL_API const bl_link *bl_fit_link (const bl_fit *fit);
BL_API bl_method bl_fit_method (const bl_fit *fit);
BL_API const char *bl_method_name (bl_method m);

/* Coefficient table, length p each, valid until bl_fit_free.  Aliased and non-existent
   entries are NAN. */
BL_API const double *bl_fit_beta (const bl_fit *fit);
BL_API const double *bl_fit_se (const bl_fit *fit);
BL_API const double *bl_fit_wald (const bl_fit *fit);
BL_API const double *bl_fit_pvalue (const bl_fit *fit);
/* log10 of each p-value, from the log-space tail: finite where p underflows to 0 (NAN where
   p is NAN; read it only where bl_fit_pvalue is finite). */
BL_API const double *bl_fit_log10p (const bl_fit *fit);
BL_API const double *bl_fit_lo (const bl_fit *fit);
BL_API const double *bl_fit_hi (const bl_fit *fit);
BL_API const int *bl_fit_aliased (const bl_fit *fit);
/* Covariance matrix (p x p column-major; aliased rows/columns NAN), the factor times phi_used. */
BL_API const double *bl_fit_cov (const bl_fit *fit);
/* Fitted means and linear predictors over the design's rows (length n).  For a transformed
   response both are on the transformed scale. */
BL_API const double *bl_fit_mu (const bl_fit *fit);
BL_API const double *bl_fit_eta (const bl_fit *fit);
/* The response actually fitted (transformed when there is a transform), the prior weights
   (NULL for all ones; WLS: the final weights a_i / v_i), and the IRLS working weights. */
BL_API const double *bl_fit_y (const bl_fit *fit);
BL_API const double *bl_fit_prior_w (const bl_fit *fit);
BL_API const double *bl_fit_working_w (const bl_fit *fit);
BL_API const bl_fit_transform_info *bl_fit_transform (const bl_fit *fit);
BL_API const bl_fit_variance_info *bl_fit_variance (const bl_fit *fit);
BL_API const char *bl_se_kind_name (bl_se_kind k);
/* The family parameter the fit used (negative binomial theta, also when theta ran to
   infinity and was capped; the Tweedie power), or 0 for the other families. */
BL_API double bl_fit_family_par (const bl_fit *fit);

/* The mean of y on its original scale at the linear predictor XB of a transformed fit: with
   SMEAR nonzero, Duan's (1983) smearing estimator (1/n) sum h^-1(XB + e_i) over the fit's
   residuals (closed forms for log and sqrt; for Box-Cox above BL_SMEAR_MAX residuals, every
   k-th in row order, k = ceil(n / BL_SMEAR_MAX)); otherwise the naive back-transform h^-1(XB), a median.  The shift, if any, is
   undone.  For an untransformed fit, XB itself. */
#define BL_SMEAR_MAX 5000
BL_API double bl_fit_backtransform (const bl_fit *fit, double xb, int smear);

/* ---- Accessors for the readers of a fit (diag.c, compare.c), implemented in fit_access.c.
   Pointers stay valid until bl_fit_free. */
BL_API size_t bl_fit_n (const bl_fit *fit);              /* rows fitted */
BL_API size_t bl_fit_p (const bl_fit *fit);              /* columns of the design */
/* (X'WX)^-1 at the fit, p x p column-major; aliased rows and columns 0. */
BL_API const double *bl_fit_cov_unscaled (const bl_fit *fit);
/* The response on its original scale (length n): the design's y for a transformed fit,
   otherwise the response fitted (bl_fit_y). */
BL_API const double *bl_fit_y_original (const bl_fit *fit);
/* ---- end of the accessors for the readers of a fit */

/* ---- The likelihood-ratio test of a smaller model nested in a fitted one, on the same rows
   (nested.c). */

typedef struct bl_nested {
  char terms[1024];            /* the smaller model's terms, canonical text */
  const char *form;            /* "chisq" (dispersion fixed) or "F" (dispersion estimated) */
  double stat, p;              /* p: the upper tail as its double (0 below 4.9e-324) */
  double log10_p;              /* log10 p from the log-space tail (family_tails.h) */
  size_t dof, dof2;            /* dof2: the F test's denominator dof (0 for chisq) */
  double deviance_small, deviance_big;
  double loglik_small, loglik_big;  /* each maximized over every parameter of its model */
  double fam_par_small, fam_par_big;  /* theta or the power in each fit; NAN without one */
  const char *statistic;       /* what stat is: "likelihood-ratio", "deviance-difference"
                                  or "deviance-F" */
} bl_nested;

/* Fit the model with SMALL's terms (and the intercept, offset and weights of BIG's design,
   from DOPT) to exactly BIG's rows of T, with BIG's options FO, and test it against BIG
   (McCullagh & Nelder 1989, section 4.4.3): with the dispersion fixed (poisson),
   D_small - D_big is chi-square on rank_big - rank_small degrees of freedom; with it
   estimated, F = ((D_small - D_big) / dof) / phi_big, phi_big the larger model's Pearson
   dispersion, on (dof, n - rank_big).  When the family's parameter (negative binomial theta,
   Tweedie power) is estimated in each model, the deviances are at different parameter
   values, so the statistic is the likelihood ratio 2 (l_big - l_small), chi-square on the
   rank difference; the two deviances are then reported for information only, each at its
   own model's parameter.  Both log-likelihoods are always given.
   Errors: BL_ESPEC when the smaller model is not nested (a column of it is not a column of
   BIG, or its rank is not smaller), BL_EDATA when it cannot be fitted on BIG's rows,
   BL_ENOCONV, BL_ENOMEM. */
BL_API int bl_nested_test (const bl_fit *big, const bl_table *t, const bl_terms *small,
                           const bl_design_opts *dopt, const bl_fit_opts *fo, bl_nested *out,
                           bl_err *err);

#ifdef __cplusplus
}
#endif
#endif
