/* diag.c -- the diagnosis object (bl_diag_new runs the checks of diag_tests.c in turn) and
   the residuals: Pearson, quantile, the residual table with leverage and Cook's distance,
   and the Kolmogorov-Smirnov statistic of the quantile residuals (see diag.h for each
   formula's source). */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include "alloc.h"
#include "diag_impl.h"
#include "family_tails.h"
#include "rowblock.h"

struct bl_diag {
  bl_diag_result r;
};

void
bl_diag_opts_init (bl_diag_opts *opt)
{
  opt->seed = BL_DIAG_SEED;
  opt->null_reps = BL_DIAG_NULL_REPS;
  opt->white_max_p = BL_DIAG_WHITE_MAX_P;
  opt->cancel = NULL;
}

void
bl_pearson_residuals (const bl_fit *f, double *r)
{
  const size_t n = bl_fit_n (f);
  const double *y = bl_fit_y (f), *mu = bl_fit_mu (f), *pw = bl_fit_prior_w (f);
  const bl_family *fam = bl_fit_family (f);
  const double par = bl_fit_family_par (f);
  for (size_t i = 0; i < n; i++) {
    const double a = pw ? pw[i] : 1.0;
    r[i] = (y[i] - mu[i]) * sqrt (a / bl_family_var (fam, mu[i], par));
  }
}

int
bl_diag_cmp_double (const void *pa, const void *pb)
{
  const double a = *(const double *) pa, b = *(const double *) pb;
  return (a > b) - (a < b);
}

/* Whether every y the fit used is an integer >= 0. */
static int
integer_response (const bl_fit *f)
{
  const size_t n = bl_fit_n (f);
  const double *y = bl_fit_y (f);
  int integer_y = 1;
  for (size_t i = 0; i < n && integer_y; i++)
    integer_y = y[i] >= 0.0 && y[i] == floor (y[i]);
  return integer_y;
}

/* BL_ECANCEL (ERR filled) when the caller's cancel flag is set, else BL_OK. */
static int
cancelled (const bl_diag_opts *opt, bl_err *err)
{
  return opt->cancel && *opt->cancel
         ? bl_fail (err, BL_ECANCEL, "diagnose", "the diagnosis was cancelled") : BL_OK;
}

bl_diag *
bl_diag_new (const bl_fit *f, const bl_diag_opts *opt, bl_err *err)
{
  bl_diag *d = bl_calloc (1, sizeof *d);
  double *e = bl_mallocn (bl_fit_n (f) ? bl_fit_n (f) : 1, sizeof *e);
  gsl_rng *rng = gsl_rng_alloc (gsl_rng_mt19937);
  int st;
  if (!d || !e || !rng) {
    st = bl_fail (err, BL_ENOMEM, "diagnose", "out of memory");
    goto done;
  }
  if (!bl_fit_stats_get (f)->converged) {
    st = bl_fail (err, BL_ENOCONV, "diagnose", "the model did not converge: nothing to "
                  "diagnose");
    goto done;
  }
  gsl_rng_set (rng, opt->seed);
  bl_pearson_residuals (f, e);
  /* the caller's cancel flag is polled inside the auxiliary regressions and between checks */
  st = bl_diag_variance_tests (f, e, opt, &d->r, err);
  if (st == BL_OK && (st = cancelled (opt, err)) == BL_OK)
    st = bl_spread_compute (bl_fit_mu (f), e, bl_fit_n (f), rng, opt->null_reps, &d->r.spread,
                            err);
  if (st == BL_OK && (st = cancelled (opt, err)) == BL_OK)
    st = bl_diag_variance_power (f, integer_response (f), &d->r.power, err);
  if (st == BL_OK && (st = cancelled (opt, err)) == BL_OK)
    st = bl_diag_lack_of_fit (f, e, opt->cancel, &d->r.lof, err);
  if (st == BL_OK)
    st = cancelled (opt, err);
done:
  bl_free (e);
  if (rng)
    gsl_rng_free (rng);
  if (st != BL_OK) {
    bl_diag_free (d);
    return NULL;
  }
  return d;
}

int
bl_variance_power (const bl_fit *f, bl_power *out, bl_err *err)
{
  if (!bl_fit_stats_get (f)->converged) {
    memset (out, 0, sizeof *out);
    out->estimate = out->se = out->lo = out->hi = out->intercept = NAN;
    out->why = "the model did not converge";
    return bl_fail (err, BL_ENOCONV, "diagnose", "the model did not converge: nothing to "
                    "diagnose");
  }
  return bl_diag_variance_power (f, integer_response (f), out, err);
}

void
bl_diag_free (bl_diag *d)
{
  if (!d)
    return;
  bl_spread_clear (&d->r.spread);
  bl_free (d->r.lof.groups);
  bl_free (d);
}

const bl_diag_result *bl_diag_get (const bl_diag *d) { return &d->r; }

/* ---------------------------------------------------------------- quantile residuals */

/* The row's quantile residual r = Phi^-1(u), u = F(y) randomized where F jumps (Dunn &
   Smyth 1996, J. Comput. Graph. Statist. 5, 236-244):
   - a discrete family: u uniform on (F(y - 1), F(y)), u = F(y - 1) + v P(Y = y);
   - a point mass at 0 (BL_FAM_ZERO_MASS): u uniform on (0, P(Y = 0)) at y = 0, elsewhere F
     is continuous;
   - otherwise u = F(y).
   Both log u and log(1 - u) are formed in log space from the family's two log tails
   (1 - u = S(y) + (1 - v) P(Y = y) for a discrete family), and r is taken from the smaller:
   r = -Q^-1(u) below the median, Q^-1(1 - u) above it (Q the normal upper tail; its inverse
   in log space, family_tails.h), so a residual at 9 or 40 sd is finite and right where u
   itself would round to 1 or to 0.  F at dispersion PHI, its gamma scale as mu / shape
   (BL_FAM_SCALE_DIV, the rounding these residuals always had). */
static double
resid_q (const bl_family *fam, double y, double mu, double a, double phi, double par,
         gsl_rng *rng)
{
  const bl_family_scale fm = BL_FAM_SCALE_DIV;
  double lu, l1mu;
  if (bl_family_has (fam, BL_FAM_DISCRETE)) {
    const double v = gsl_rng_uniform_pos (rng);
    const double lp = bl_family_log_interval (fam, y - 1.0, y, mu, a, phi, par, fm);
    const double lflo = y >= 1.0 ? bl_family_logcdf (fam, y - 1.0, mu, a, phi, par, fm)
                                 : -HUGE_VAL;
    lu = bl_tail_logaddexp (lflo, log (v) + lp);
    l1mu = bl_tail_logaddexp (bl_family_logsf (fam, y, mu, a, phi, par, fm),
                              log1p (-v) + lp);
  } else if (bl_family_has (fam, BL_FAM_ZERO_MASS) && y == 0.0) {
    lu = log (gsl_rng_uniform_pos (rng)) + bl_family_logcdf (fam, 0.0, mu, a, phi, par, fm);
    l1mu = bl_tail_log1mexp (lu);
  } else {
    lu = bl_family_logcdf (fam, y, mu, a, phi, par, fm);
    if (lu < -M_LN2)                /* u < 1/2: the lower tail is the smaller */
      return -bl_tail_norm_Qinv_log (lu);
    l1mu = bl_family_logsf (fam, y, mu, a, phi, par, fm);
  }
  return lu < l1mu ? -bl_tail_norm_Qinv_log (lu) : bl_tail_norm_Qinv_log (l1mu);
}

/* Quantile residuals, polling CANCEL (may be NULL) every BL_IRLS_BLOCK rows.  The dispersion
   is the Pearson estimate (1 when it is fixed), or the ML one for a family that asks for it
   (BL_FAM_CDF_PHI_ML). */
static int
quantile_residuals (const bl_fit *f, gsl_rng *rng, volatile sig_atomic_t *cancel, double *q,
                    bl_err *err)
{
  const bl_family *fam = bl_fit_family (f);
  const bl_fit_stats *st = bl_fit_stats_get (f);
  const double phi = bl_family_has (fam, BL_FAM_CDF_PHI_ML) ? st->phi_ml
                     : bl_family_has (fam, BL_FAM_PHI_FREE) ? st->phi_pearson : 1.0;
  const size_t n = bl_fit_n (f);
  const double *y = bl_fit_y (f), *mu = bl_fit_mu (f), *pw = bl_fit_prior_w (f);
  const double par = bl_fit_family_par (f);
  for (size_t i = 0; i < n; i++) {
    if (cancel && i % BL_IRLS_BLOCK == 0 && *cancel)
      return bl_fail (err, BL_ECANCEL, "residuals", "the residual table was cancelled");
    q[i] = resid_q (fam, y[i], mu[i], pw ? pw[i] : 1.0, phi, par, rng);
  }
  return BL_OK;
}

int
bl_quantile_residuals (const bl_fit *f, gsl_rng *rng, double *q, bl_err *err)
{
  return quantile_residuals (f, rng, NULL, q, err);
}

void
bl_resid_table_free (bl_resid_table *t)
{
  if (!t)
    return;
  bl_free (t->response);
  bl_free (t->pearson);
  bl_free (t->deviance);
  bl_free (t->working);
  bl_free (t->quantile);
  bl_free (t->leverage);
  bl_free (t->cooks);
  bl_free (t);
}

/* The table's per-row columns beside the Pearson and quantile residuals, one block of rows
   at a time: BL_OK, or BL_ECANCEL once CANCEL is set. */
static int
resid_rows (const bl_fit *f, bl_resid_table *t, double *blk, volatile sig_atomic_t *cancel,
            bl_err *err)
{
  const size_t n = bl_fit_n (f), p = bl_fit_p (f);
  const bl_family *fam = bl_fit_family (f);
  const bl_link *lnk = bl_fit_link (f);
  const double par = bl_fit_family_par (f);
  const double *y = bl_fit_y (f), *mu = bl_fit_mu (f), *pw = bl_fit_prior_w (f);
  const double *eta = bl_fit_eta (f), *w = bl_fit_working_w (f);
  const double *cov = bl_fit_cov_unscaled (f);
  const int *aliased = bl_fit_aliased (f);
  const bl_fit_stats *st = bl_fit_stats_get (f);
  const double phi = bl_family_has (fam, BL_FAM_PHI_FREE) ? st->phi_pearson : 1.0;
  BL_ROWBLOCK_FOR (rb, 0, n, BL_IRLS_BLOCK) {
    if (cancel && *cancel)
      return bl_fail (err, BL_ECANCEL, "residuals", "the residual table was cancelled");
    bl_design_fill (bl_fit_design (f), rb.row0, rb.n, blk, BL_IRLS_BLOCK);
    for (size_t i = 0; i < rb.n; i++) {
      const size_t row = rb.row0 + i;
      const double a = pw ? pw[row] : 1.0, yr = y[row], m = mu[row];
      const double dmu = lnk->dmu_deta (eta[row]);
      double h = 0.0;
      /* leverage h = w x' (X'WX)^-1 x (the diagonal of the IRLS hat matrix; McCullagh &
         Nelder 1989, section 12.7.1), Cook's distance r_P^2 h / (phi k (1 - h)^2) with k the
         rank (Cook 1977, Technometrics 19, 15-18, in its GLM form) */
      for (size_t j = 0; j < p; j++) {
        double s = 0.0;
        if (aliased[j])
          continue;
        for (size_t k = 0; k < p; k++)
          if (!aliased[k])
            s += cov[j + k * p] * blk[i + k * BL_IRLS_BLOCK];
        h += blk[i + j * BL_IRLS_BLOCK] * s;
      }
      h *= w[row];
      t->response[row] = yr - m;
      t->deviance[row] = (yr >= m ? 1.0 : -1.0) * sqrt (a * bl_family_dev (fam, yr, m, par));
      t->working[row] = (yr - m) / dmu;
      t->leverage[row] = h;
      t->cooks[row] = h < 1.0 ? t->pearson[row] * t->pearson[row] * h
                                / (phi * (double) st->rank * (1.0 - h) * (1.0 - h)) : NAN;
    }
  }
  return BL_OK;
}

bl_resid_table *
bl_resid_table_new (const bl_fit *f, gsl_rng *rng, volatile sig_atomic_t *cancel, bl_err *err)
{
  const size_t n = bl_fit_n (f), p = bl_fit_p (f);
  bl_resid_table *t = bl_calloc (1, sizeof *t);
  double *blk = bl_mallocn ((size_t) BL_IRLS_BLOCK * (p ? p : 1), sizeof *blk);
  int st = BL_OK;
  if (t) {
    t->n = n;
    t->response = bl_mallocn (n ? n : 1, sizeof (double));
    t->pearson = bl_mallocn (n ? n : 1, sizeof (double));
    t->deviance = bl_mallocn (n ? n : 1, sizeof (double));
    t->working = bl_mallocn (n ? n : 1, sizeof (double));
    t->quantile = bl_mallocn (n ? n : 1, sizeof (double));
    t->leverage = bl_mallocn (n ? n : 1, sizeof (double));
    t->cooks = bl_mallocn (n ? n : 1, sizeof (double));
  }
  if (!t || !blk || !t->response || !t->pearson || !t->deviance || !t->working
      || !t->quantile || !t->leverage || !t->cooks) {
    st = bl_fail (err, BL_ENOMEM, "residuals", "out of memory");
    goto done;
  }
  bl_pearson_residuals (f, t->pearson);
  if ((st = quantile_residuals (f, rng, cancel, t->quantile, err)) != BL_OK)
    goto done;
  st = resid_rows (f, t, blk, cancel, err);
done:
  bl_free (blk);
  if (st != BL_OK) {
    bl_resid_table_free (t);
    return NULL;
  }
  return t;
}

void
bl_ks_normal (double *x, size_t n, double *d, double *p)
{
  double dmax = 0.0, lam, s = 0.0, en;
  if (n == 0) {
    *d = *p = NAN;
    return;
  }
  qsort (x, n, sizeof *x, bl_diag_cmp_double);
  for (size_t i = 0; i < n; i++) {
    const double F = gsl_cdf_ugaussian_P (x[i]);
    const double d1 = (double) (i + 1) / (double) n - F, d2 = F - (double) i / (double) n;
    dmax = d1 > dmax ? d1 : dmax;
    dmax = d2 > dmax ? d2 : dmax;
  }
  en = sqrt ((double) n);
  lam = (en + 0.12 + 0.11 / en) * dmax;
  for (int k = 1; k <= 100; k++) {
    const double term = 2.0 * ((k % 2) ? 1.0 : -1.0) * exp (-2.0 * k * k * lam * lam);
    s += term;
    if (fabs (term) < 1e-16)
      break;
  }
  *d = dmax;
  *p = s < 0.0 ? 0.0 : s > 1.0 ? 1.0 : s;
  if (lam < 0.2)
    *p = 1.0;
}
