/* compare_cv.c -- the cross-validated prediction error of the compared candidates: K folds
   from one seeded permutation of the rows, each candidate refitted on the other folds with
   the options of its full fit (a Box-Cox lambda held at its all-rows estimate), RMSE and MAE
   of the held-out rows on y's original scale (transformed candidates back-transformed with
   Duan's smearing of the training residuals, bl_fit_backtransform). */
#include <math.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include "alloc.h"
#include "compare_impl.h"
#include "rowblock.h"

/* The mean of y for a new row at linear predictor ETA (offset included) under fit F. */
static double
predict_mean (const bl_fit *f, double eta)
{
  if (bl_fit_method (f) == BL_METHOD_GLM)
    return bl_fit_link (f)->ginv (eta);
  if (bl_fit_transform (f)->kind != BL_TRANSFORM_NONE)
    return bl_fit_backtransform (f, eta, 1);
  return eta;
}

/* Fold G of the cross-validation: fit on the other folds' rows (SEL and BLK are scratch of n
   rows and one block), add the squared and absolute errors of fold G's rows to SE and AE.
   A fold that cannot be fitted sets *FAILED and gets a note in K.  BL_OK, or BL_ENOMEM. */
static int
cv_fold (const bl_design *d, const bl_fit_opts *o, const size_t *fold, size_t g, size_t *sel,
         double *blk, bl_candidate *k, long double *se, long double *ae, int *failed,
         bl_err *err)
{
  const size_t n = bl_design_n (d), p = bl_design_p (d);
  const double *y = bl_design_y (d), *off = bl_design_offset (d);
  size_t m = 0;
  bl_design *sub;
  bl_fit *ft = NULL;
  bl_err e;
  int st = BL_OK;
  for (size_t i = 0; i < n; i++)
    if (fold[i] != g)
      sel[m++] = i;
  sub = bl_design_subset (d, sel, m, err);
  if (!sub)
    return BL_ENOMEM;
  ft = bl_fit_new (sub, o, &e);
  if ((ft ? bl_fit_status (ft)->code : e.code) == BL_ENOMEM) {
    /* exhaustion is the caller's error, not a note about the fold (compare.h) */
    st = bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    goto done;
  }
  if (!ft || !bl_fit_stats_get (ft)->converged) {
    *failed = 1;
    if (bl_warnings_add (&k->notes, "cross-validation: fold %zu could not be fitted (%s)",
                         g + 1, ft ? bl_fit_status (ft)->msg : e.msg) != BL_OK)
      st = bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    goto done;
  }
  {
    const int *aliased = bl_fit_aliased (ft);
    const double *beta = bl_fit_beta (ft);
    BL_ROWBLOCK_FOR (rb, 0, n, BL_IRLS_BLOCK) {
      int any = 0;
      for (size_t i = 0; i < rb.n && !any; i++)
        any = fold[rb.row0 + i] == g;
      if (!any)
        continue;
      bl_design_fill (d, rb.row0, rb.n, blk, BL_IRLS_BLOCK);
      for (size_t i = 0; i < rb.n; i++) {
        double eta = off ? off[rb.row0 + i] : 0.0, res;
        if (fold[rb.row0 + i] != g)
          continue;
        for (size_t j = 0; j < p; j++)
          if (!aliased[j])
            eta += blk[i + j * BL_IRLS_BLOCK] * beta[j];
        res = y[rb.row0 + i] - predict_mean (ft, eta);
        if (!isfinite (res)) {
          /* a back-transform beyond a double (exp of a large eta): no error to count */
          *failed = 1;
          if (bl_warnings_add (&k->notes, "cross-validation: fold %zu predicts a mean out of "
                               "range for double precision (linear predictor %g)", g, eta)
              != BL_OK)
            st = bl_fail (err, BL_ENOMEM, "compare", "out of memory");
          goto done;
        }
        *se += (long double) res * res;
        *ae += fabs (res);
      }
    }
  }
done:
  bl_fit_free (ft);
  bl_design_free (sub);
  return st;
}

/* K-fold cross-validated RMSE and MAE of candidate K (spec SP) on D. */
static int
cross_validate (const bl_design *d, const bl_compare_opts *opt, const spec *sp, double lam,
                const size_t *fold, bl_candidate *k, bl_err *err)
{
  const size_t n = bl_design_n (d), p = bl_design_p (d), K = opt->folds;
  size_t *sel = bl_mallocn (n, sizeof *sel);
  double *blk = bl_mallocn ((size_t) BL_IRLS_BLOCK * (p ? p : 1), sizeof *blk);
  long double se = 0.0L, ae = 0.0L;
  bl_fit_opts o;
  int st = BL_OK, failed = 0;
  if (!sel || !blk) {
    st = bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    goto done;
  }
  bl_compare_fit_opts (opt, sp, lam, &o);
  if (sp->tr == BL_TRANSFORM_BOXCOX && k->fit) {     /* lambda as estimated on all rows */
    o.lambda_est = 0;
    o.lambda = bl_fit_transform (k->fit)->lambda;
  }
  o.se = BL_SE_MODEL;
  for (size_t g = 0; g < K; g++) {
    if (bl_compare_cancelled (opt)) {
      st = bl_fail (err, BL_ECANCEL, "compare", "the comparison was cancelled");
      goto done;
    }
    if ((st = cv_fold (d, &o, fold, g, sel, blk, k, &se, &ae, &failed, err)) != BL_OK)
      goto done;
    if (failed) {
      k->cv_rmse = k->cv_mae = NAN;
      goto done;
    }
  }
  k->cv_rmse = sqrt ((double) (se / (long double) n));
  k->cv_mae = (double) (ae / (long double) n);
done:
  bl_free (sel);
  bl_free (blk);
  return st;
}

/* Cross-validation of every converged candidate, with folds from one seeded permutation;
   c->folds = 0 when none are asked for (opt->folds 0).  More folds than rows is BL_EDATA
   naming both numbers (it used to run no fold at all, silently); bl_job_run refuses it
   before the candidates are fitted, this is the library's own guard.  The default number
   of folds (opt->folds_default) on fewer rows runs none, with advice saying so. */
int
bl_compare_cv (bl_compare *c, const bl_design *d, const bl_compare_opts *opt, bl_err *err)
{
  const size_t n = bl_design_n (d);
  gsl_rng *rng = NULL;
  size_t *fold = NULL, *perm = NULL;
  int st = BL_OK;
  if (opt->folds > n && opt->folds_default) {
    c->folds = 0;
    if (bl_warnings_add (&c->advice, "no cross-validation: the %zu rows are fewer than the "
                         "default %zu folds (--folds K with 2 <= K <= %zu, or 0)", n,
                         opt->folds, n) != BL_OK)
      st = bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    goto done;
  }
  if (opt->folds > n)
    return bl_fail (err, BL_EDATA, "--folds", "%zu folds need at least %zu rows; the model "
                    "has %zu", opt->folds, opt->folds, n);
  if (opt->folds < 2) {
    c->folds = 0;
    goto done;
  }
  rng = gsl_rng_alloc (gsl_rng_mt19937);
  fold = bl_mallocn (n, sizeof *fold);
  perm = bl_mallocn (n, sizeof *perm);
  if (!rng || !fold || !perm) {
    st = bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    goto done;
  }
  gsl_rng_set (rng, opt->seed);
  for (size_t i = 0; i < n; i++)
    perm[i] = i;
  gsl_ran_shuffle (rng, perm, n, sizeof *perm);
  for (size_t i = 0; i < n; i++)
    fold[perm[i]] = i % opt->folds;
  for (size_t i = 0; i < c->nc && st == BL_OK; i++)
    if (c->c[i].converged)
      st = cross_validate (d, opt, &c->sp[i], c->lam[i], fold, &c->c[i], err);
done:
  if (rng)
    gsl_rng_free (rng);
  bl_free (fold);
  bl_free (perm);
  if (st == BL_OK && bl_compare_cancelled (opt))         /* a fold's fit was cut short */
    st = bl_fail (err, BL_ECANCEL, "compare", "the comparison was cancelled");
  return st;
}
