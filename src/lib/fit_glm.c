/* fit_glm.c -- the GLM core of the fitting layer: the checks before a fit (support, offset
   range, means running to 0), one IRLS fit into a bl_fit, its summary figures and the null
   model.  Every engine (fit_wls.c, fit_transform.c, fit_negbin.c, fit_tweedie.c) calls
   bl_fit_core; it calls only the result layer (fit_result.c) below it.

   Formulas (prior weights a_i throughout; McCullagh & Nelder 1989, Generalized Linear Models,
   2nd ed., chapters 2 and 8, unless stated):
     Pearson chi2  X2 = sum a_i (y_i - mu_i)^2 / V(mu_i);  phi_pearson = X2 / (n - rank)
     cov(beta)     = phi (X'WX)^-1, from the QR factor (lsq.h); phi = phi_pearson when the
                     dispersion is free, 1 for poisson unless the Pearson scale is asked for
     loglik        = sum_i log f(y_i; mu_i, phi_ml / a_i), at the MLE of phi (family.h)
     AIC = -2 l + 2 k (Akaike 1974, IEEE Trans. Autom. Control 19, 716-723), k = rank + 1 when
     phi is free; AICc = AIC + 2 k (k + 1) / (n - k - 1) (Hurvich & Tsai 1989, Biometrika 76,
     297-307); BIC = -2 l + k log n (Schwarz 1978, Ann. Statist. 6, 461-464). */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "alloc.h"
#include "fit_glm.h"
#include "irls.h"
#include "rowblock.h"

static void
design_fill (const void *ctx, size_t row0, size_t nr, double *out, size_t ld)
{
  bl_design_fill (ctx, row0, nr, out, ld);
}

static void
design_fill_ld (const void *ctx, size_t row0, size_t nr, long double *out, size_t ld)
{
  bl_design_fill_ld (ctx, row0, nr, out, ld);
}

static size_t
design_line (const void *ctx, size_t i)
{
  return bl_design_line (ctx, i);
}

static void
ones_fill (const void *ctx, size_t row0, size_t nr, double *out, size_t ld)
{
  (void) ctx; (void) row0; (void) ld;
  for (size_t i = 0; i < nr; i++)
    out[i] = 1.0;
}

/* y inside the family's support on every row; count the offenders and name the first. */
int
bl_fit_check_support (const bl_design *d, const double *y, const bl_family *fam, bl_err *err)
{
  const size_t n = bl_design_n (d);
  if (!y)
    y = bl_design_y (d);
  size_t bad = 0, first = 0;
  for (size_t i = 0; i < n; i++)
    if (!bl_family_y_ok (fam, y[i]) && bad++ == 0)
      first = i;
  if (bad) {
    char where[1100];
    snprintf (where, sizeof where, "%s:%zu", bl_design_source (d), bl_design_line (d, first));
    return bl_fail (err, BL_EDATA, where,
                    "'%s' has %zu value%s outside the support (first: %.17g); the %s family "
                    "needs %s", bl_design_response (d), bad, bad == 1 ? "" : "s", y[first],
                    bl_family_name (fam), bl_family_support (fam));
  }
  return BL_OK;
}

/* Nonzero when y = 0 is in the family's support but a mean of 0 is not in the model: the
   family's mean space or the link's range leaves it out (poisson, negative binomial and
   Tweedie with any link; the gaussian with the log, inverse or sqrt link). */
static int
zero_mean_excluded (const bl_family *fam, const bl_link *lnk)
{
  return bl_family_y_ok (fam, 0.0)
         && (!bl_family_mu_ok (fam, 0.0) || !lnk->valid_eta (lnk->g (0.0)));
}

/* Nonzero when every mean of the model is positive (the family's mean space, or the log or
   sqrt link): then a row with y <= 0 (y = 0 for the count families, any y <= 0 for the
   gaussian) has a unit deviance that falls as its mean falls to 0, and only rows with y > 0
   hold a mean away from 0. */
static int
positive_means (const bl_family *fam, const bl_link *lnk)
{
  return !bl_family_mu_ok (fam, -1.0) || lnk == &bl_link_log || lnk == &bl_link_sqrt;
}

/* Whether row value Y holds its mean away from 0 (see positive_means). */
static int
holds_mean (double y, int positive)
{
  return positive ? y > 0.0 : y != 0.0;
}

/* An offset that the link cannot carry: under the log link mu = exp(eta), and an offset
   beyond log(DBL_MAX) (about 709.8) in absolute value makes exp overflow or underflow to 0
   whatever the coefficients; IRLS would only report that some row's mean became invalid.
   Named by its line instead (common practice, no source). */
static int
check_offset_range (const bl_design *d, const bl_link *lnk, bl_err *err)
{
  const double *off = bl_design_offset (d), lim = log (DBL_MAX);
  if (!off || lnk != &bl_link_log)
    return BL_OK;
  for (size_t i = 0; i < bl_design_n (d); i++)
    if (fabs (off[i]) > lim) {
      char where[1100];
      snprintf (where, sizeof where, "%s:%zu", bl_design_source (d), bl_design_line (d, i));
      return bl_fail (err, BL_EDATA, where, "the offset is %g here, beyond the log link's "
                      "range: exp(offset) is %s in double precision whatever the "
                      "coefficients (|offset| must be at most %.4g)", off[i],
                      off[i] > 0 ? "infinite" : "zero", lim);
    }
  return BL_OK;
}

/* A candidate combination v of check_mean_boundary: a column, or with an intercept the
   indicator of one categorical column's reference level. */
typedef struct cand {
  size_t nz, first;                 /* rows where v != 0; the first of them */
  int pos, neg, hit;                /* v > 0 somewhere, v < 0 somewhere, v != 0 where y > 0 */
} cand;

/* One pass over the rows in blocks of BL_IRLS_BLOCK: where each candidate of C (the P
   columns, then one per category) is nonzero, of which sign, and whether on a row with
   y > 0.  GRP[j] is the category of column j or -1; BUF holds one block, SUM one entry per
   category. */
static void
scan_candidates (const bl_design *d, const double *y, const long *grp, int positive, cand *c,
                 double *buf, double *sum)
{
  const size_t n = bl_design_n (d), p = bl_design_p (d), ncat = bl_design_ncat (d);
  const size_t nc = p + ncat;
  const size_t ld = BL_IRLS_BLOCK;
  BL_ROWBLOCK_FOR (rb, 0, n, ld) {
    const size_t r0 = rb.row0, nb = rb.n;
    bl_design_fill (d, r0, nb, buf, ld);
    for (size_t i = 0; i < nb; i++) {
      const int yp = holds_mean (y[r0 + i], positive);
      for (size_t g = 0; g < ncat; g++)
        sum[g] = 0.0;
      for (size_t k = 0; k < nc; k++) {
        double v;
        if (k < p) {
          v = buf[i + k * ld];
          if (grp[k] >= 0)
            sum[grp[k]] += v;
        } else if (bl_design_has_intercept (d))
          v = buf[i] - sum[k - p];     /* column 0 is the intercept */
        else
          continue;
        if (v == 0.0)
          continue;
        if (c[k].nz++ == 0)
          c[k].first = r0 + i;
        c[k].pos |= v > 0.0;
        c[k].neg |= v < 0.0;
        c[k].hit |= yp;
      }
    }
  }
}

/* No maximum-likelihood estimate when the mean runs to 0.  In a model whose support holds
   y = 0 while its means must be nonzero (zero_mean_excluded), a linear combination v = X d of
   the columns that is one-signed, nonzero on some rows and 0 on every row with y > 0 makes
   the likelihood rise without bound along -d (or d): the rows where v is nonzero all have
   y = 0, and their log density rises as their mean falls to 0 (poisson: -mu; negative
   binomial: theta log(theta / (theta + mu)); Tweedie: -mu^(2-p) / (phi (2-p)); gaussian:
   -mu^2 / (2 phi)), while no other row changes.  So the supremum lies on the boundary and
   IRLS only creeps toward it (under the log link the coefficients run off to infinity while
   the deviance settles).  The condition is that of Santos Silva, J. M. C. & Tenreyro, S.
   (2010), "On the existence of the maximum likelihood estimates in Poisson regression",
   Economics Letters 107, 310-312 (from memory); it is sufficient for non-existence.  It is
   checked here exactly for two kinds of combination: every single column (a level, or a
   numeric term that is 0 wherever y > 0), and, with an intercept, the intercept minus the
   indicator columns "C=LEVEL" of one categorical column (the indicator of its reference
   level).  Other combinations are caught after the fit by the vanishing-mean warning
   (summarize). */
static int
check_mean_boundary (const bl_design *d, const double *y, const bl_family *fam,
                     const bl_link *lnk, bl_err *err)
{
  const size_t n = bl_design_n (d), p = bl_design_p (d), ncat = bl_design_ncat (d);
  const size_t nc = p + ncat;         /* candidates: the columns, then one per category */
  const size_t ld = BL_IRLS_BLOCK;
  cand *c;
  double *buf, *sum;
  long *grp;                          /* category of column j, or -1 */
  size_t nzero = 0, bad = nc;
  int st = BL_OK;
  const int positive = positive_means (fam, lnk);
  if (!zero_mean_excluded (fam, lnk))
    return BL_OK;
  for (size_t i = 0; i < n; i++)
    nzero += !holds_mean (y[i], positive);
  if (nzero == 0)
    return BL_OK;
  c = bl_calloc (nc, sizeof *c);
  buf = bl_mallocn (ld * p, sizeof *buf);
  sum = bl_calloc (ncat ? ncat : 1, sizeof *sum);
  grp = bl_mallocn (p, sizeof *grp);
  if (!c || !buf || !sum || !grp) {
    st = bl_fail (err, BL_ENOMEM, "fit", "out of memory");
    goto done;
  }
  for (size_t j = 0; j < p; j++) {
    const char *lab = bl_design_label (d, j);
    grp[j] = -1;
    for (size_t g = 0; g < ncat && bl_design_has_intercept (d) && j > 0; g++) {
      const char *cn = bl_design_cat_column (d, g);
      const size_t m = strlen (cn);
      if (strncmp (lab, cn, m) == 0 && lab[m] == '=')
        grp[j] = (long) g;
    }
  }
  scan_candidates (d, y, grp, positive, c, buf, sum);
  for (size_t k = 0; k < nc && bad == nc; k++) {
    int members = k < p;
    for (size_t j = 0; j < p && !members; j++)
      members = grp[j] == (long) (k - p);
    if (members && c[k].nz > 0 && !c[k].hit && !(c[k].pos && c[k].neg))
      bad = k;
  }
  if (bad < nc) {
    const cand *b = &c[bad];
    const char *resp = bl_design_response (d);
    const char *zero = bl_family_y_ok (fam, -1.0) ? "<= 0" : "0";
    char where[1100];
    snprintf (where, sizeof where, "%s", bl_design_source (d));
    if (b->nz == n)
      st = bl_fail (err, BL_EDATA, where, "every value of '%s' is %s: the %s family's mean "
                    "runs to 0 and no maximum-likelihood estimate exists", resp, zero,
                    bl_family_name (fam));
    else if (bad < p)
      st = bl_fail (err, BL_EDATA, where, "'%s' cannot be estimated: '%s' is %s on all "
                    "%zu rows where it is nonzero (first: line %zu), so the likelihood keeps "
                    "rising as their fitted mean goes to 0 and no maximum-likelihood estimate "
                    "exists%s; merge or drop that group, or leave those rows out",
                    bl_design_label (d, bad), resp, zero, b->nz, bl_design_line (d, b->first),
                    lnk != &bl_link_log ? ""
                    : b->pos ? " (under the log link its coefficient runs off to minus "
                    "infinity)" : " (under the log link its coefficient runs off to "
                    "infinity)");
    else
      st = bl_fail (err, BL_EDATA, where, "level '%s' of '%s' (the reference level) cannot "
                    "be estimated: '%s' is %s on all %zu rows of that level (first: line "
                    "%zu), so the likelihood keeps rising as their fitted mean goes to 0 and "
                    "no maximum-likelihood estimate exists; merge or drop that level, or leave "
                    "those rows out", bl_design_cat_reference (d, bad - p),
                    bl_design_cat_column (d, bad - p), resp, zero, b->nz,
                    bl_design_line (d, b->first));
  }
done:
  bl_free (c);
  bl_free (buf);
  bl_free (sum);
  bl_free (grp);
  return st;
}

/* Null deviance: the intercept-only model with the same offset and weights, or the offset
   alone without an intercept (then dof_null = n). */
static void
null_deviance (bl_fit *f, const bl_fit_opts *opt)
{
  const bl_design *d = f->d;
  const size_t n = f->n;
  const double *y = f->y, *a = f->a, *off = bl_design_offset (d);
  long double dev = 0.0L;
  f->st.deviance_null_why = "";
  if (bl_design_has_intercept (d) && !off) {
    long double sy = 0.0L, sa = 0.0L;
    double ybar;
    for (size_t i = 0; i < n; i++) {
      sy += (a ? a[i] : 1.0) * y[i];
      sa += a ? a[i] : 1.0;
    }
    ybar = (double) (sy / sa);   /* the MLE of a common mean in every family and link */
    for (size_t i = 0; i < n; i++)
      dev += (a ? a[i] : 1.0) * bl_family_dev (f->fam, y[i], ybar, f->fam_par);
    f->st.deviance_null = (double) dev;
  } else if (bl_design_has_intercept (d)) {
    bl_irls_model m = { f->fam, f->link, n, 1, y, off, a, ones_fill, NULL, NULL, 1,
                        f->fam_par, NULL, NULL };
    bl_irls_opts io = opt->irls;
    bl_err e;
    bl_irls_work *ws;
    io.solver = BL_SOLVER_AUTO;
    ws = bl_irls_work_new (&m, &io, &e);
    if (ws && bl_irls_run (ws, &e) == BL_OK) {
      f->st.deviance_null = bl_irls_deviance (ws);
    } else {
      f->st.deviance_null = NAN;
      f->st.deviance_null_why = ws ? "the intercept-only model did not converge"
                                   : "out of memory for the intercept-only model";
    }
    bl_irls_work_free (ws);
  } else {
    for (size_t i = 0; i < n; i++) {
      const double eta = off ? off[i] : 0.0;
      double mu;
      if (!f->link->valid_eta (eta) || !bl_family_mu_ok (f->fam, mu = f->link->ginv (eta))) {
        f->st.deviance_null = NAN;
        f->st.deviance_null_why = "the offset alone gives no valid mean under this link";
        return;
      }
      dev += (a ? a[i] : 1.0) * bl_family_dev (f->fam, y[i], mu, f->fam_par);
    }
    f->st.deviance_null = (double) dev;
  }
}


/* The means, working weights, rank, deviance and Pearson chi2 of a converged workspace, the
   perfect-fit test and the range check; *SA is the total prior weight. */
static int
summary_fit (bl_fit *f, const bl_irls_work *ws, long double *sa_out, bl_err *err)
{
  const bl_design *d = f->d;
  const size_t n = f->n, p = f->p;
  const double *y = f->y, *a = f->a;
  bl_fit_stats *st = &f->st;
  const bl_lsq_sol *sol = bl_irls_sol (ws);
  long double x2 = 0.0L, ssy = 0.0L, rss = 0.0L, sa = 0.0L;

  memcpy (f->mu, bl_irls_mu (ws), n * sizeof (double));
  memcpy (f->eta, bl_irls_eta (ws), n * sizeof (double));
  memcpy (f->cov_unscaled, sol->cov, p * p * sizeof (double));
  for (size_t i = 0; i < n; i++) {
    /* working weights at the fit, for leverages and sandwich covariances */
    const double dmu = f->link->dmu_deta (f->eta[i]);
    f->w[i] = (a ? a[i] : 1.0) * dmu * dmu / bl_family_var (f->fam, f->mu[i], f->fam_par);
  }
  st->rank = sol->rank;
  st->dof_resid = n > sol->rank ? n - sol->rank : 0;
  st->dof_null = bl_design_has_intercept (d) ? n - 1 : n;
  st->deviance = bl_irls_deviance (ws);
  for (size_t i = 0; i < n; i++) {
    const double ai = a ? a[i] : 1.0, r = y[i] - f->mu[i];
    x2 += ai * r * r / bl_family_var (f->fam, f->mu[i], f->fam_par);
    /* in long double, whose range holds the squares of every double, so that the tests
       below see the true size of a sum that overflows or underflows a double */
    ssy += (long double) ai * y[i] * y[i];
    rss += (long double) ai * ((long double) y[i] - f->mu[i]) * ((long double) y[i] - f->mu[i]);
    sa += ai;
  }
  st->pearson = (double) x2;
  st->phi_pearson = st->dof_resid > 0 ? st->pearson / (double) st->dof_resid : NAN;

  /* A perfect fit: residuals at rounding level, relative to the data (gaussian: the
     residual sum of squares against sum a y^2, both in long double) or to the total prior
     weight (the other families' unit deviances are scale-free).  No floor of 1: data on a
     small scale (y near 1e-13, or weights near 1e-300) are not perfect fits. */
  if (bl_family_has (f->fam, BL_FAM_NORMAL))
    st->perfect = rss <= 1e-24L * ssy;
  else
    st->perfect = bl_family_has (f->fam, BL_FAM_PHI_FREE) && st->deviance <= 1e-24 * (double) sa;
  /* Figures a double cannot hold: refused rather than reported as 0 or infinity.  The
     deviance of a gaussian fit is the residual sum of squares; a value past DBL_MAX, or a
     nonzero one below DBL_MIN (where the dispersion, the standard errors and the
     log-likelihood lose every digit), comes from a response near 1e+154 or 1e-154 or
     beyond. */
  if (!isfinite (st->deviance)
      || (bl_family_has (f->fam, BL_FAM_NORMAL) && !st->perfect
          && !(rss >= (long double) DBL_MIN && rss <= (long double) DBL_MAX))) {
    long double ymax = 0.0L;
    for (size_t i = 0; i < n; i++)
      if (fabsl (y[i]) > ymax)
        ymax = fabsl (y[i]);
    return bl_fail (err, BL_EDATA, bl_design_source (d), "'%s' is out of range for double "
                    "precision: its %s is %Lg (largest |value| %Lg), beyond what a double "
                    "holds (%g to %g); rescale it, e.g. by a power of ten",
                    bl_design_response (d),
                    bl_family_has (f->fam, BL_FAM_NORMAL) ? "residual sum of squares" : "deviance",
                    bl_family_has (f->fam, BL_FAM_NORMAL) ? rss : (long double) st->deviance, ymax,
                    DBL_MIN, DBL_MAX);
  }
  if (st->perfect
      && bl_warnings_add (&f->warn, "perfect fit: the residual variance is zero, so the "
                          "log-likelihood, AIC and BIC do not exist") != BL_OK)
    return bl_fail (err, BL_ENOMEM, "fit", "out of memory");
  *sa_out = sa;
  return BL_OK;
}

/* The dispersion (Pearson and maximum likelihood, and the one the covariance uses), the
   parameter count and the log-likelihood with AIC, AICc and BIC. */
static void
summary_likelihood (bl_fit *f, const bl_lsq_sol *sol, const bl_fit_opts *opt)
{
  const size_t n = f->n;
  const double *y = f->y, *a = f->a;
  bl_fit_stats *st = &f->st;

  if (!bl_family_has (f->fam, BL_FAM_PHI_FREE)) {
    st->phi_ml = 1.0;
    st->phi_ml_why = "";
    st->phi_used = opt->dispersion_pearson ? st->phi_pearson : 1.0;
    st->se_kind = opt->dispersion_pearson ? "pearson" : "model";
  } else {
    st->phi_used = st->phi_pearson;
    st->se_kind = "model";
    if (st->perfect) {
      st->phi_ml = 0.0;
      st->phi_ml_why = "";
    } else {
      bl_err e;
      if (bl_family_phi_ml (f->fam, y, f->mu, a, n, st->deviance, &st->phi_ml, &e) != BL_OK) {
        st->phi_ml = NAN;
        st->phi_ml_why = "the dispersion MLE could not be computed";
      } else {
        st->phi_ml_why = "";
      }
    }
  }
  if (st->dof_resid == 0 && bl_family_has (f->fam, BL_FAM_PHI_FREE))
    st->phi_used = NAN;
  st->wald_is_t = bl_family_has (f->fam, BL_FAM_PHI_FREE) || opt->dispersion_pearson;

  st->k = sol->rank + (bl_family_has (f->fam, BL_FAM_PHI_FREE) ? 1u : 0u);
  st->loglik_why = "";
  st->aicc_why = "";
  if (st->perfect) {
    st->loglik = st->aic = st->aicc = st->bic = NAN;
    st->loglik_why = "perfect fit: zero residual variance makes the likelihood unbounded";
    st->aicc_why = st->loglik_why;
  } else if (!isfinite (st->phi_ml)) {
    st->loglik = st->aic = st->aicc = st->bic = NAN;
    st->loglik_why = "the dispersion MLE could not be computed";
    st->aicc_why = st->loglik_why;
  } else {
    st->loglik = bl_family_loglik_p (f->fam, y, f->mu, a, n, st->phi_ml, f->fam_par);
    st->aic = -2.0 * st->loglik + 2.0 * (double) st->k;
    st->bic = -2.0 * st->loglik + (double) st->k * log ((double) n);
    if (n > st->k + 1) {
      st->aicc = st->aic + 2.0 * (double) st->k * (double) (st->k + 1) / (double) (n - st->k - 1);
    } else {
      st->aicc = NAN;
      st->aicc_why = "n - k - 1 <= 0: the small-sample correction does not exist";
    }
    if (!isfinite (st->loglik)) {
      st->loglik = st->aic = st->aicc = st->bic = NAN;
      st->loglik_why = "the log-likelihood is not finite at the fitted means";
      st->aicc_why = st->loglik_why;
    }
  }
}

/* The coefficient table from the solve, scaled by the dispersion, with a warning for each
   aliased column; a standard error out of a double's range is an error. */
static int
summary_coefs (bl_fit *f, const bl_irls_work *ws, bl_err *err)
{
  const bl_lsq_sol *sol = bl_irls_sol (ws);
  const bl_design *d = f->d;
  const size_t n = f->n, p = f->p;
  bl_fit_stats *st = &f->st;
  int wst;

  for (size_t j = 0; j < p; j++) {
    f->aliased[j] = sol->aliased[j];
    f->beta[j] = sol->aliased[j] ? NAN : bl_irls_beta (ws)[j];
    for (size_t k = 0; k < p; k++)
      f->cov[j + k * p] = (sol->aliased[j] || sol->aliased[k]) ? NAN
                          : sol->cov[j + k * p] * st->phi_used;
    if (sol->aliased[j]) {
      wst = bl_warnings_add (&f->warn, "'%s' is aliased (a linear combination of the terms "
                             "before it) and was left out", bl_design_label (d, j));
      if (wst != BL_OK)
        return bl_fail (err, BL_ENOMEM, "fit", "out of memory");
    }
  }
  bl_fit_wald_table (f);
  /* The covariance factor (X'WX)^-1 of an estimated coefficient is positive; 0, subnormal
     or infinite means its column's scale (beyond about 1e+154 or 1e-154) put it out of a
     double's range, and the standard error would be reported as 0 or null.  Likewise a
     standard error that the dispersion pushes out of range. */
  for (size_t j = 0; j < p; j++) {
    const double cu = sol->cov[j + j * p];
    if (f->aliased[j])
      continue;
    if (!isnormal (cu) || (isnormal (st->phi_used) && !isnormal (f->se[j]))) {
      /* the column's largest magnitude, for the message (an error path: one pass) */
      double xmax = 0.0, *blk = bl_mallocn (BL_IRLS_BLOCK * p, sizeof *blk);
      if (!blk)
        return bl_fail (err, BL_ENOMEM, "fit", "out of memory");
      BL_ROWBLOCK_FOR (rb, 0, n, BL_IRLS_BLOCK) {
        const size_t r0 = rb.row0, nb = rb.n;
        bl_design_fill (d, r0, nb, blk, BL_IRLS_BLOCK);
        for (size_t i = 0; i < nb; i++)
          if (fabs (blk[i + j * BL_IRLS_BLOCK]) > xmax)
            xmax = fabs (blk[i + j * BL_IRLS_BLOCK]);
      }
      bl_free (blk);
      return bl_fail (err, BL_EDATA, bl_design_source (d), "the standard error of '%s' is "
                      "out of range for double precision (its variance %Lg, the factor %g "
                      "times the dispersion %g, is not a normal double; the column's largest "
                      "|value| is %g); rescale the column, e.g. by a power of ten",
                      bl_design_label (d, j), (long double) cu * st->phi_used, cu,
                      st->phi_used, xmax);
    }
  }
  return BL_OK;
}

/* The warnings a converged fit may carry: overdispersion, and means vanishing where y = 0. */
static int
summary_warnings (bl_fit *f, const bl_fit_opts *opt, long double sa, bl_err *err)
{
  const bl_design *d = f->d;
  const size_t n = f->n;
  const double *y = f->y, *a = f->a;
  bl_fit_stats *st = &f->st;
  int wst;

  if (bl_family_has (f->fam, BL_FAM_OVERDISP) && st->dof_resid > 0
      && st->phi_pearson > BL_FIT_OVERDISPERSION && !opt->dispersion_pearson) {
    wst = bl_warnings_add (&f->warn, "overdispersion: Pearson chi2 / residual dof = %.3g "
                           "exceeds %.3g; the standard errors are too small (consider "
                           "--dispersion pearson)", st->phi_pearson, BL_FIT_OVERDISPERSION);
    if (wst != BL_OK)
      return bl_fail (err, BL_ENOMEM, "fit", "out of memory");
  }

  /* The combinations that check_mean_boundary does not try: rows with y = 0 whose fitted
     mean has collapsed far below the mean of y point to a combination of terms running off
     to infinity (common practice, no source: the threshold BL_FIT_MU_VANISH is a choice). */
  if (zero_mean_excluded (f->fam, f->link) && sa > 0.0L) {
    long double sy = 0.0L;
    size_t nv = 0, first = 0;
    double ybar;
    for (size_t i = 0; i < n; i++)
      sy += (long double) (a ? a[i] : 1.0) * y[i];
    ybar = (double) (sy / sa);
    for (size_t i = 0; i < n; i++)
      if (y[i] == 0.0 && f->mu[i] < BL_FIT_MU_VANISH * ybar && nv++ == 0)
        first = i;
    if (nv && bl_warnings_add (&f->warn, "%zu row%s with '%s' = 0 %s fitted means below %g "
                               "times the mean of '%s' (first: line %zu): a combination of "
                               "the terms may be running off to infinity (no maximum-"
                               "likelihood estimate exists when one is 0 wherever '%s' > 0 "
                               "and one-signed elsewhere); look for a group whose counts are "
                               "all 0", nv, nv == 1 ? "" : "s", bl_design_response (d),
                               nv == 1 ? "has" : "have", BL_FIT_MU_VANISH,
                               bl_design_response (d), bl_design_line (d, first),
                               bl_design_response (d)) != BL_OK)
      return bl_fail (err, BL_ENOMEM, "fit", "out of memory");
  }
  return BL_OK;
}

/* Fill the coefficient table and every summary figure from a converged workspace. */
static int
summarize (bl_fit *f, const bl_irls_work *ws, const bl_fit_opts *opt, bl_err *err)
{
  const bl_lsq_sol *sol = bl_irls_sol (ws);
  long double sa = 0.0L;
  int st = summary_fit (f, ws, &sa, err);
  if (st != BL_OK)
    return st;
  summary_likelihood (f, sol, opt);
  if ((st = summary_coefs (f, ws, err)) != BL_OK)
    return st;
  return summary_warnings (f, opt, sa, err);
}

/* The options and data a GLM fit needs before any allocation: an OLS fit is the normal
   family with the identity link, the level lies in (0, 1), y is inside the family's support,
   no mean is forced to 0 (check_mean_boundary) and the offset fits the link. */
static int
core_checks (const bl_design *d, const double *y, const bl_fit_opts *opt, const bl_family *fam,
             const bl_link *lnk, bl_err *err)
{
  if (opt->method == BL_METHOD_OLS
      && (!bl_family_has (fam, BL_FAM_NORMAL) || lnk != &bl_link_identity))
    return bl_fail (err, BL_ESPEC, "--method", "ols is the gaussian family with the identity "
                    "link; use --method glm for family '%s' with link '%s'",
                    bl_family_name (fam), lnk->name);
  if (!(opt->level > 0.0 && opt->level < 1.0))
    return bl_fail (err, BL_ESPEC, "--level", "the level must lie strictly between 0 and 1, "
                    "not %g", opt->level);
  if (bl_fit_check_support (d, y, fam, err) != BL_OK
      || check_mean_boundary (d, y, fam, lnk, err) != BL_OK
      || check_offset_range (d, lnk, err) != BL_OK)
    return err ? err->code : BL_EDATA;
  return BL_OK;
}

/* A count family without a shape parameter (poisson) reads non-integer y as counts: say how
   many there are.  Returns BL_OK or BL_ENOMEM. */
static int
warn_non_integer (bl_fit *f)
{
  size_t nonint = 0;
  if (!bl_family_has (f->fam, BL_FAM_DISCRETE) || bl_family_par_kind (f->fam) != BL_FAMPAR_NONE)
    return BL_OK;
  for (size_t i = 0; i < f->n; i++)
    if (f->y[i] != floor (f->y[i]))
      nonint++;
  if (nonint && bl_warnings_add (&f->warn, "'%s' has %zu non-integer values; the %s "
                                 "likelihood treats them as counts", bl_design_response (f->d),
                                 nonint, bl_family_name (f->fam)) != BL_OK)
    return BL_ENOMEM;
  return BL_OK;
}

/* What runs to the edge at a row where the fit is pressed against it: the mean toward 0 or
   toward infinity, named by the link (identity, sqrt: mu = 0 is the end of the mean space;
   inverse: eta = 1/mu reaches 0, so mu runs to infinity; log: eta at the end of exp's
   range, mu to 0 below and to infinity above). */
static const char *
edge_kind (const bl_link *lnk, double eta, double mu)
{
  if (lnk == &bl_link_inverse)
    return "runs to infinity (the linear predictor 1/mu runs to 0)";
  if (lnk == &bl_link_log)
    return eta > 0.0 ? "runs to infinity (the linear predictor log mu runs off)"
                     : "runs to 0 (the linear predictor log mu runs off)";
  if (lnk == &bl_link_sqrt)
    return "runs to 0 (the linear predictor sqrt mu runs to 0)";
  return fabs (mu) > 1.0 ? "runs off" : "runs to 0";
}

/* Estimates running to the edge of the parameter space (bl_irls_boundary): no interior
   maximum exists, so the fit reports the row, what ran to the edge and its value there,
   instead of "converged" with standard errors that do not apply.  The supremum lies on the
   boundary where the unit deviance stays finite as the mean reaches the edge: y = 0 rows of
   the count families (and Tweedie) and y <= 0 rows of the gaussian as mu -> 0, the inverse
   gaussian as mu -> infinity, d(y, mu) -> 1/y (McCullagh & Nelder 1989, table 2.1: the
   limits of the unit deviances; the gamma's grow without bound at both ends, so its maxima
   are interior). */
static int
boundary_status (bl_fit *f, const bl_irls_work *ws)
{
  const bl_design *d = f->d;
  size_t row = 0;
  int eta_bad = 0;
  char where[1100];
  double eta, mu;
  if (!bl_irls_boundary (ws, &row, &eta_bad))
    return 0;
  eta = bl_irls_eta (ws)[row];
  mu = bl_irls_mu (ws)[row];
  snprintf (where, sizeof where, "%s:%zu", bl_design_source (d), bl_design_line (d, row));
  /* the place in the message itself: callers show the message of a failed fit's status */
  bl_fail (&f->status, BL_EDATA, bl_design_source (d), "no interior maximum: at %s the "
           "fitted mean %s under the %s family with the %s link (mu = %.6g there, '%s' = "
           "%.6g): step halving kept the means valid only by creeping toward that edge, and "
           "the likelihood keeps rising toward it, so no estimate with standard errors "
           "exists; try another link (e.g. log) or leave such rows out", where,
           edge_kind (f->link, eta, mu), bl_family_name (f->fam), f->link->name, mu,
           bl_design_response (d), f->y[row]);
  return 1;
}

/* A fit that did not converge keeps its status and has no figures to stand behind; WHY is
   the reason given for each null figure. */
static void
mark_unconverged (bl_fit *f, int st, const char *why)
{
  const bl_design *d = f->d;
  if (st == BL_ENOCONV && bl_family_has (f->fam, BL_FAM_NORMAL) && f->link == &bl_link_identity)
    /* One exact solve, so the only way out of the mean space is a solution that a
       double cannot hold (a response near 1e+300 against a term near 1e-300): say so,
       rather than blame step halving. */
    bl_fail (&f->status, BL_ENOCONV, bl_design_source (d), "the least-squares solution is "
             "out of range for double precision (a coefficient or fitted value beyond "
             "%g): the scales of '%s' and of the terms are too far apart; rescale them, "
             "e.g. by powers of ten", DBL_MAX, bl_design_response (d));
  f->st.converged = 0;
  f->st.wald_is_t = bl_family_has (f->fam, BL_FAM_PHI_FREE);   /* what a fit would use */
  for (size_t j = 0; j < f->p; j++)
    f->beta[j] = f->se[j] = f->wald[j] = f->pval[j] = f->lo[j] = f->hi[j] = NAN;
  f->st.deviance = f->st.deviance_null = f->st.pearson = NAN;
  f->st.phi_pearson = f->st.phi_ml = f->st.phi_used = NAN;
  f->st.loglik = f->st.aic = f->st.aicc = f->st.bic = NAN;
  f->st.loglik_why = f->st.aicc_why = f->st.deviance_null_why = f->st.phi_ml_why = why;
}

/* The IRLS model of fit F: its family, link, response, weights and the design's columns. */
static void
irls_model (const bl_fit *f, bl_irls_model *m)
{
  const bl_design *d = f->d;
  m->fam = f->fam;
  m->link = f->link;
  m->n = f->n;
  m->p = f->p;
  m->y = f->y;
  m->offset = bl_design_offset (d);
  m->prior_w = f->a;
  m->fill = design_fill;
  m->fill_ld = design_fill_ld;
  m->ctx = d;
  m->intercept = bl_design_has_intercept (d);
  m->fam_par = f->fam_par;
  m->source = bl_design_source (d);
  m->line = design_line;
}

bl_fit *
bl_fit_core (const bl_design *d, const double *y, const double *a, const bl_fit_opts *opt,
             int light, bl_err *err)
{
  bl_fit *f = NULL;
  bl_irls_work *ws = NULL;
  bl_irls_model m;
  int st;
  const bl_family *fam = opt->fam ? opt->fam : &bl_family_gaussian;
  const bl_link *lnk = opt->link ? opt->link : bl_family_default_link (fam);

  if (core_checks (d, y ? y : bl_design_y (d), opt, fam, lnk, err) != BL_OK)
    return NULL;
  if (!(f = bl_fit_result_new (d, y, a, opt, fam, lnk, err)))
    return NULL;
  if (warn_non_integer (f) != BL_OK) {
    bl_fail (err, BL_ENOMEM, "fit", "out of memory");
    goto fail;
  }
  irls_model (f, &m);
  if (!(ws = bl_irls_work_new (&m, &opt->irls, err)))
    goto fail;
  f->st.solver = bl_solver_name (bl_irls_solver (ws));
  st = bl_irls_run (ws, &f->status);
  f->st.iterations = bl_irls_iterations (ws);
  f->st.halvings = bl_irls_halvings (ws);
  if (st == BL_ENOMEM) {
    bl_fail (err, BL_ENOMEM, "irls", "out of memory");
    goto fail;
  }
  if (st == BL_EDATA) {       /* no valid start: a data problem, not a convergence failure */
    if (err)
      *err = f->status;
    goto fail;
  }
  if ((st == BL_OK || st == BL_ENOCONV) && boundary_status (f, ws)) {
    mark_unconverged (f, BL_EDATA, "the maximum is on the boundary of the parameter space");
    goto done;
  }
  if (st != BL_OK) {
    mark_unconverged (f, st, "the fit did not converge");
    goto done;
  }
  f->st.converged = 1;
  bl_err_clear (&f->status);
  if (summarize (f, ws, opt, err) != BL_OK)
    goto fail;
  bl_irls_work_free (ws);     /* before the null model's workspace is made */
  ws = NULL;
  if (!light)
    null_deviance (f, opt);
  else {
    f->st.deviance_null = NAN;
    f->st.deviance_null_why = "not computed for an intermediate fit";
  }
  goto done;
fail:
  bl_fit_free (f);
  f = NULL;
done:
  bl_irls_work_free (ws);
  return f;
}
