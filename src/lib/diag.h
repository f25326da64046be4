/* diag.h -- residuals and the checks of whether the variance is really constant:
   Breusch-Pagan, Koenker and White tests, the spread ratio with its null quantile, the
   variance power, a lack-of-fit check, and the residual table. */
#ifndef BALLAST_DIAG_H
#define BALLAST_DIAG_H
#include <signal.h>
#include <stddef.h>
#include <gsl/gsl_rng.h>
#include "error.h"
#include "fit.h"
#include "table.h"
#ifdef __cplusplus
extern "C" {
#endif

#define BL_DIAG_GROUPS 5            /* spread groups by fitted value */
#define BL_DIAG_MIN_GROUP 20        /* rows a group at least */
#define BL_DIAG_POWER_MIN_GROUPS 10 /* groups needed for the variance power */
#define BL_DIAG_POWER_MAX_GROUPS 20
#define BL_DIAG_WHITE_MAX_P 20      /* White's test skipped above this many non-intercept columns */
#define BL_DIAG_NULL_REPS 4000      /* simulated replicates of the spread ratio under H0 */
#define BL_DIAG_SPREAD_FLAG 2.0     /* a four-fold change of variance (common practice) */
#define BL_DIAG_LOF_GROUPS 10       /* lack-of-fit bins */
#define BL_DIAG_LOF_Z 3.0           /* a bin mean this many standard errors from 0 is flagged */
#define BL_DIAG_SEED 20261201UL

typedef struct bl_diag_opts {
  unsigned long seed;               /* BL_DIAG_SEED; the null quantile's simulation */
  size_t null_reps;                 /* BL_DIAG_NULL_REPS */
  size_t white_max_p;               /* BL_DIAG_WHITE_MAX_P */
  volatile sig_atomic_t *cancel;    /* polled by the auxiliary regressions and between the
                                       checks (BL_ECANCEL); NULL (default) for none */
} bl_diag_opts;

BL_API void bl_diag_opts_init (bl_diag_opts *opt);

typedef struct bl_diag_test {
  int done;                         /* 0: skipped, see why */
  double stat, p;                   /* p: the upper tail as its double (0 below 4.9e-324) */
  double log10_p;                   /* log10 of p from the log-space tail, finite there too */
  size_t dof;
  const char *why;                  /* "" when done */
} bl_diag_test;

typedef struct bl_spread_group { size_t n; double fitted_mean, rms; } bl_spread_group;

typedef struct bl_spread {
  size_t ngroups;
  bl_spread_group *groups;          /* owned; bl_spread_clear frees */
  double ratio, null95;             /* NAN with why when fewer than 2 groups */
  int flag;
  const char *why;
} bl_spread;

typedef struct bl_power {
  int done;
  double estimate, se, lo, hi;      /* slope and its 95% interval */
  size_t groups_used, groups_left_out;
  const char *suggested;            /* "gaussian", "poisson", "gamma", "inverse-gaussian" */
  double suggested_power;           /* its K (0, 1, 2, 3) */
  int suggested_outside;            /* 1: that K lies outside [lo, hi] */
  const char *mean_model;           /* the fit the residuals came from: "gamma/log" (y > 0),
                                       "poisson/log" (counts), or "model" (the fit's own) */
  const char *why;
  /* The points of the log-log mean-variance plot, groups_used of them in order of fitted
     value: log of the group's mean fitted value and log of its mean squared raw residual;
     intercept is the fitted line's (NAN unless done), so log_var = intercept + estimate
     log_mean. */
  double log_mean[BL_DIAG_POWER_MAX_GROUPS], log_var[BL_DIAG_POWER_MAX_GROUPS];
  double intercept;
} bl_power;

typedef struct bl_lof_group {
  const char *against;              /* "fitted" or a column label (owned by the design/fit) */
  size_t n;
  double x_mean, resid_mean, se;
  int flag;
} bl_lof_group;

typedef struct bl_lof {
  int flag;
  size_t ngroups;
  bl_lof_group *groups;
} bl_lof;

typedef struct bl_diag bl_diag;

typedef struct bl_diag_result {
  bl_diag_test breusch_pagan, koenker, white;
  bl_spread spread;
  bl_power power;
  bl_lof lof;
} bl_diag_result;

/* Pearson residuals of FIT into R (length n): (y - mu) sqrt(a / V(mu)) with the fit's own
   response, means and prior weights, which makes them sqrt(w) r for WLS and the
   transformed-scale residual for transformed OLS (one definition everywhere). */
BL_API void bl_pearson_residuals (const bl_fit *fit, double *r);

/* The spread ratio of residuals R (length n) grouped by FITTED: G = BL_DIAG_GROUPS groups (fewer
   when a group would hold fewer than BL_DIAG_MIN_GROUP rows); group g holds sorted rows
   floor(g n / G) .. floor((g + 1) n / G) - 1; ratio = max rms / min rms.  null95 is its 95%
   quantile under constant variance for these group sizes, simulated with RNG: under normal
   residuals of common variance, n_g rms_g^2 / sigma^2 is chi-square on n_g (common practice,
   no source).  Fills OUT (free with bl_spread_clear). */
BL_API int bl_spread_compute (const double *fitted, const double *r, size_t n, gsl_rng *rng,
                              size_t reps, bl_spread *out, bl_err *err);
BL_API void bl_spread_clear (bl_spread *s);

/* The variance power of FIT alone (as bl_diag_new computes it, with its plot points) into
   OUT.  Returns BL_OK (OUT->done says whether there was an estimate, OUT->why why not),
   BL_ENOCONV when FIT did not converge, or BL_ENOMEM; OUT is filled in every case. */
BL_API int bl_variance_power (const bl_fit *fit, bl_power *out, bl_err *err);

/* All checks on FIT.  NULL with ERR on failure. */
BL_API bl_diag *bl_diag_new (const bl_fit *fit, const bl_diag_opts *opt, bl_err *err);
BL_API void bl_diag_free (bl_diag *d);
BL_API const bl_diag_result *bl_diag_get (const bl_diag *d);

/* The residual table: per row the response, Pearson, deviance, working and randomized
   quantile residuals (Dunn & Smyth 1996, J. Comput. Graph. Statist. 5, 236-244; the discrete
   family's uniform draws from RNG), leverage and Cook's distance.  Arrays of length n.
   CANCEL (may be NULL) is polled every BL_IRLS_BLOCK rows: once set, NULL with BL_ECANCEL. */
typedef struct bl_resid_table {
  size_t n;
  double *response, *pearson, *deviance, *working, *quantile, *leverage, *cooks;
} bl_resid_table;
BL_API bl_resid_table *bl_resid_table_new (const bl_fit *fit, gsl_rng *rng,
                                           volatile sig_atomic_t *cancel, bl_err *err);
BL_API void bl_resid_table_free (bl_resid_table *t);

/* Quantile residuals alone (as in the table) into Q (length n). */
BL_API int bl_quantile_residuals (const bl_fit *fit, gsl_rng *rng, double *q, bl_err *err);

/* Kolmogorov-Smirnov test of X (length n, sorted in place) against the standard normal:
   D = sup |F_n - Phi| and its asymptotic p-value with Stephens' (1970) correction,
   lambda = (sqrt n + 0.12 + 0.11 / sqrt n) D, p = 2 sum (-1)^(k-1) exp(-2 k^2 lambda^2). */
BL_API void bl_ks_normal (double *x, size_t n, double *d, double *p);

/* Equal spread across the levels of a categorical column: the Brown-Forsythe (1974, JASA
   69, 364-367) test, the one-way ANOVA F of z_i = |r_i - median of r in i's group| with r
   the Pearson residuals, on (G - 1, N - G) degrees of freedom. */
typedef struct bl_bf_group {
  const char *level;                /* valid while the table lives */
  size_t n;
  double median, spread;            /* the group's median residual and mean |r - median| */
} bl_bf_group;

typedef struct bl_bf {
  char column[256];
  double stat, p, log10_p;          /* p as in bl_diag_test */
  size_t dof, dof2;
  size_t ngroups;
  bl_bf_group *groups;              /* owned; bl_bf_clear frees */
} bl_bf;

/* Group FIT's rows by the categorical column COL of T (the fit's own table).  BL_ESPEC when
   COL is missing or not categorical ("--by"), BL_EDATA when a used row has no level there
   (naming its line) or fewer than two groups have rows, BL_ENOMEM. */
BL_API int bl_brown_forsythe (const bl_fit *fit, const bl_table *t, const char *col, bl_bf *out,
                              bl_err *err);
BL_API void bl_bf_clear (bl_bf *b);

#ifdef __cplusplus
}
#endif
#endif
