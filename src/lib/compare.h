/* compare.h -- rank the variance treatments (GLMs, WLS, transformed OLS) fitted to one row
   set, on the original response's likelihood scale. */
#ifndef BALLAST_COMPARE_H
#define BALLAST_COMPARE_H
#include <stddef.h>
#include "design.h"
#include "error.h"
#include "fit.h"
#ifdef __cplusplus
extern "C" {
#endif

#define BL_COMPARE_FOLDS 10
#define BL_COMPARE_SEED 20261201UL
#define BL_COMPARE_DELTA 2.0         /* candidates within this AIC of the winner: a tie */
#define BL_COMPARE_MAX 32

/* Default candidate ids, in table order:
     ls        ordinary least squares
     ls-log    least squares of log(y)          ls-sqrt   least squares of sqrt(y)
     ls-bc     least squares of the Box-Cox power of y, lambda estimated
     ls-bc=L   the same with lambda fixed at L (added for the practical lambda when it is not
               0, 0.5 or 1, which ls-log, ls-sqrt and ls already are)
     wls-mu    weighted least squares, Var y = sigma^2 mu^K, K estimated
     gau-log   gaussian GLM, log link         poi-log   poisson GLM, log link
     gam-log   gamma GLM, log link            gam-inv   gamma, inverse link
     gam-id    gamma, identity link           ig-log    inverse gaussian, log link
     nb-log    negative binomial, log link, theta estimated (integer y)
     tw-log    Tweedie, log link, power estimated (y >= 0; fitted by default only when y has
               exact zeros and non-integer values)
   When y has exact zeros and non-integer values, only candidates with a point mass at zero
   (tw-log) can account for the zeros: the candidates are ranked in two groups, "point-mass"
   and "continuous", each with its own deltas and weights, and the recommendation comes from
   the point-mass group. */
#define BL_COMPARE_DEFAULT "ls,ls-log,ls-sqrt,ls-bc,wls-mu,gau-log,poi-log,nb-log,gam-log," \
                           "gam-inv,gam-id,ig-log,tw-log"

typedef struct bl_compare_opts {
  const char *candidates;          /* comma-separated ids, or NULL for BL_COMPARE_DEFAULT */
  size_t folds;                    /* cross-validation folds; 0 for none */
  int folds_default;               /* 1: folds is the default, not the user's: more folds
                                      than rows then skips cross-validation with advice
                                      instead of refusing */
  unsigned long seed;              /* folds, quantile residuals, null quantiles */
  size_t null_reps;
  bl_fit_opts fit;                 /* level, irls limits, se kind: shared by candidates */
} bl_compare_opts;

BL_API void bl_compare_opts_init (bl_compare_opts *opt);

/* Check a candidate list for syntax (unknown ids, duplicates, bad ls-bc=L): BL_ESPEC naming
   "--candidates" and the entry, found before any work. */
BL_API int bl_compare_check_list (const char *list, bl_err *err);

typedef struct bl_candidate {
  char id[40];
  const char *description;
  const char *method, *family, *link, *transform;   /* fit option names; transform NULL */
  double lambda, variance_power;   /* NAN where they do not apply */
  int applicable;                  /* 0: left out (notes say why) */
  int converged;
  size_t n, k, rank;
  double loglik, aic, aicc, bic;
  double loglik_discrete, aic_discrete;   /* integer y only; else NAN */
  double delta_aic, akaike_weight;        /* by rank_by; NAN for those not ranked */
  double cv_rmse, cv_mae;
  double spread_ratio, spread_null95;
  int spread_flag;
  double normality_stat, normality_p;     /* Kolmogorov-Smirnov of the quantile residuals */
  size_t rank_position;                   /* 1 = winner; 0 = not ranked */
  const char *group;                      /* "point-mass" or "continuous" when y has exact
                                             zeros and non-integer values; else NULL */
  double theta, power;                    /* nb-log theta, tw-log power; NAN elsewhere */
  bl_warnings notes;
  bl_fit *fit;                            /* NULL when not fitted */
} bl_candidate;

typedef struct bl_compare bl_compare;

/* Fit every candidate to D's rows (none are dropped: a candidate whose support the data break
   is left out with a note), score and rank them.  NULL with ERR only for BL_ENOMEM, a bad
   list (BL_ESPEC) or BL_ECANCEL (opt->fit.irls.cancel set: polled between candidates and
   folds and inside each fit); a candidate that fails stays in the table with its reason. */
BL_API bl_compare *bl_compare_run (const bl_design *d, const bl_compare_opts *opt, bl_err *err);
BL_API void bl_compare_free (bl_compare *c);

BL_API size_t bl_compare_count (const bl_compare *c);
BL_API const bl_candidate *bl_compare_get (const bl_compare *c, size_t i);
BL_API const char *bl_compare_rank_by (const bl_compare *c);    /* "aic" or "aic_discrete" */
/* Index of the winner, or -1 when nothing converged. */
BL_API long bl_compare_winner (const bl_compare *c);
BL_API const bl_warnings *bl_compare_advice (const bl_compare *c);
BL_API size_t bl_compare_folds (const bl_compare *c);
BL_API unsigned long bl_compare_seed (const bl_compare *c);
BL_API int bl_compare_integer_y (const bl_compare *c);
/* Nonzero when y has exact zeros and non-integer values (ranking by group). */
BL_API int bl_compare_zero_groups (const bl_compare *c);

#ifdef __cplusplus
}
#endif
#endif
