/* compare.c -- candidates on one row set, scored on the original response's scale.

   Every candidate is fitted by bl_fit_glm with the options `ballast fit` would use, so its
   AIC is the one `fit` reports.  Scores:
   - AIC = -2 l + 2 k (Akaike 1974), delta to the best, Akaike weights exp(-delta/2) / sum
     (Burnham & Anderson 2002, Model Selection and Multimodel Inference, 2nd ed., 2.9);
   - integer y: a continuous candidate's density is not comparable with a count model's
     probabilities, so each is also scored by the discretized likelihood
     sum log P(y_i - 1/2 < Y_i <= y_i + 1/2) at its fitted parameters (the lower end clipped
     to the support: y = 0 takes all the mass below 1/2), and the ranking uses it;
   - cross-validated prediction error on y's scale (folds seeded; transformed candidates
     back-transformed with Duan's smearing of the training residuals);
   - the spread ratio of its own Pearson residuals and a Kolmogorov-Smirnov statistic of its
     quantile residuals (Dunn & Smyth 1996). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include "alloc.h"
#include "compare.h"
#include "diag.h"
#include "fit_impl.h"

typedef struct spec {
  const char *id;
  bl_method method;
  const bl_family *fam;
  const bl_link *link;
  bl_transform tr;
  int lambda_est;
  bl_variance var;
  const char *desc;
} spec;

static const spec specs[] = {
  { "ls", BL_METHOD_OLS, &bl_family_gaussian, &bl_link_identity, BL_TRANSFORM_NONE, 0,
    BL_VARIANCE_NONE, "ordinary least squares" },
  { "ls-log", BL_METHOD_OLS, &bl_family_gaussian, &bl_link_identity, BL_TRANSFORM_LOG, 0,
    BL_VARIANCE_NONE, "least squares of log(y)" },
  { "ls-sqrt", BL_METHOD_OLS, &bl_family_gaussian, &bl_link_identity, BL_TRANSFORM_SQRT, 0,
    BL_VARIANCE_NONE, "least squares of sqrt(y)" },
  { "ls-bc", BL_METHOD_OLS, &bl_family_gaussian, &bl_link_identity, BL_TRANSFORM_BOXCOX, 1,
    BL_VARIANCE_NONE, "least squares of a Box-Cox power of y, lambda estimated" },
  { "wls-mu", BL_METHOD_WLS, &bl_family_gaussian, &bl_link_identity, BL_TRANSFORM_NONE, 0,
    BL_VARIANCE_FITTED, "weighted least squares, variance sigma^2 mu^K, K estimated" },
  { "gau-log", BL_METHOD_GLM, &bl_family_gaussian, &bl_link_log, BL_TRANSFORM_NONE, 0,
    BL_VARIANCE_NONE, "gaussian GLM, log link" },
  { "poi-log", BL_METHOD_GLM, &bl_family_poisson, &bl_link_log, BL_TRANSFORM_NONE, 0,
    BL_VARIANCE_NONE, "poisson GLM, log link" },
  { "gam-log", BL_METHOD_GLM, &bl_family_gamma, &bl_link_log, BL_TRANSFORM_NONE, 0,
    BL_VARIANCE_NONE, "gamma GLM, log link" },
  { "gam-inv", BL_METHOD_GLM, &bl_family_gamma, &bl_link_inverse, BL_TRANSFORM_NONE, 0,
    BL_VARIANCE_NONE, "gamma GLM, inverse link" },
  { "gam-id", BL_METHOD_GLM, &bl_family_gamma, &bl_link_identity, BL_TRANSFORM_NONE, 0,
    BL_VARIANCE_NONE, "gamma GLM, identity link" },
  { "ig-log", BL_METHOD_GLM, &bl_family_invgauss, &bl_link_log, BL_TRANSFORM_NONE, 0,
    BL_VARIANCE_NONE, "inverse gaussian GLM, log link" },
  { "nb-log", BL_METHOD_GLM, &bl_family_negbin, &bl_link_log, BL_TRANSFORM_NONE, 0,
    BL_VARIANCE_NONE, "negative binomial GLM, log link, theta estimated" },
  { "tw-log", BL_METHOD_GLM, &bl_family_tweedie, &bl_link_log, BL_TRANSFORM_NONE, 0,
    BL_VARIANCE_NONE, "Tweedie GLM, log link, power estimated" },
};
#define NSPECS (sizeof specs / sizeof specs[0])

struct bl_compare {
  size_t nc;
  bl_candidate c[BL_COMPARE_MAX];
  spec sp[BL_COMPARE_MAX];
  double lam[BL_COMPARE_MAX];      /* fixed lambda of an ls-bc=L candidate */
  int integer_y;
  int zero_groups;               /* y has exact zeros and non-integer values */
  int default_list;              /* the candidates are the default list */
  long winner;
  bl_warnings advice;
  size_t folds;
  unsigned long seed;
};

void
bl_compare_opts_init (bl_compare_opts *opt)
{
  opt->candidates = NULL;
  opt->folds = BL_COMPARE_FOLDS;
  opt->seed = BL_COMPARE_SEED;
  opt->null_reps = BL_DIAG_NULL_REPS;
  bl_fit_opts_init (&opt->fit);
}

/* One entry of a candidate list: its spec, and lambda for ls-bc=L.  0 or -1. */
static int
lookup (const char *tok, spec *sp, double *lam)
{
  for (size_t i = 0; i < NSPECS; i++)
    if (strcmp (tok, specs[i].id) == 0) {
      *sp = specs[i];
      *lam = NAN;
      return 0;
    }
  if (strncmp (tok, "ls-bc=", 6) == 0) {
    char *end;
    const double l = strtod (tok + 6, &end);
    if (end == tok + 6 || *end || !(l >= BL_BOXCOX_MIN && l <= BL_BOXCOX_MAX))
      return -1;
    *sp = specs[3];
    sp->lambda_est = 0;
    sp->desc = "least squares of a Box-Cox power of y, lambda fixed";
    *lam = l;
    return 0;
  }
  return -1;
}

/* Walk LIST calling back per trimmed entry; BL_ESPEC for an empty or unknown entry or a
   duplicate. */
static int
parse_list (const char *list, bl_compare *c, bl_err *err)
{
  char buf[1024];
  size_t len = strlen (list);
  char *tok;
  if (len >= sizeof buf)
    return bl_fail (err, BL_ESPEC, "--candidates", "the list is too long");
  memcpy (buf, list, len + 1);
  tok = buf;
  for (;;) {
    char *comma = strchr (tok, ','), *e;
    spec sp;
    double lam;
    if (comma)
      *comma = '\0';
    while (*tok == ' ')
      tok++;
    for (e = tok + strlen (tok); e > tok && e[-1] == ' ';)
      *--e = '\0';
    if (!*tok)
      return bl_fail (err, BL_ESPEC, "--candidates", "empty entry in '%s'", list);
    if (lookup (tok, &sp, &lam) != 0)
      return bl_fail (err, BL_ESPEC, "--candidates", "unknown candidate '%s' (known: %s, "
                      "ls-bc=L with L in [-3, 3])", tok, BL_COMPARE_DEFAULT);
    if (c) {
      for (size_t i = 0; i < c->nc; i++)
        if (strcmp (c->c[i].id, tok) == 0)
          return bl_fail (err, BL_ESPEC, "--candidates", "candidate '%s' is listed twice", tok);
      if (c->nc >= BL_COMPARE_MAX - 1)
        return bl_fail (err, BL_ESPEC, "--candidates", "more than %d candidates",
                        BL_COMPARE_MAX - 1);
      snprintf (c->c[c->nc].id, sizeof c->c[c->nc].id, "%s", tok);
      c->sp[c->nc] = sp;
      c->lam[c->nc] = lam;
      c->nc++;
    }
    if (!comma)
      return BL_OK;
    tok = comma + 1;
  }
}

int
bl_compare_check_list (const char *list, bl_err *err)
{
  bl_compare *c = bl_calloc (1, sizeof *c);
  int st;
  if (!c)
    return bl_fail (err, BL_ENOMEM, "compare", "out of memory");
  st = parse_list (list, c, err);
  bl_free (c);
  return st;
}

static void
cand_init (bl_candidate *k, const spec *sp, double lam)
{
  k->description = sp->desc;
  k->method = bl_method_name (sp->method);
  k->family = sp->fam->name;
  k->link = sp->link->name;
  k->transform = sp->tr == BL_TRANSFORM_LOG ? "log" : sp->tr == BL_TRANSFORM_SQRT ? "sqrt"
                 : sp->tr == BL_TRANSFORM_BOXCOX ? "boxcox" : NULL;
  k->lambda = sp->tr == BL_TRANSFORM_BOXCOX ? lam : NAN;
  k->variance_power = NAN;
  k->applicable = 1;
  k->loglik = k->aic = k->aicc = k->bic = NAN;
  k->loglik_discrete = k->aic_discrete = NAN;
  k->delta_aic = k->akaike_weight = NAN;
  k->cv_rmse = k->cv_mae = NAN;
  k->spread_ratio = k->spread_null95 = NAN;
  k->normality_stat = k->normality_p = NAN;
  k->theta = k->power = NAN;
  k->group = NULL;
}

static void
fit_opts_for (const bl_compare_opts *opt, const spec *sp, double lam, bl_fit_opts *o)
{
  *o = opt->fit;
  o->method = sp->method;
  o->fam = sp->fam;
  o->link = sp->link;
  o->transform = sp->tr;
  o->lambda_est = sp->lambda_est;
  o->lambda = isfinite (lam) ? lam : 1.0;
  o->shift_given = 0;
  o->variance = sp->var;
  o->power_est = sp->var != BL_VARIANCE_NONE;
  o->variance_col = NULL;
  o->dispersion_pearson = 0;
  o->fam_par_est = 1;
}

/* h(y) of a transformed fit, for the discretized likelihood. */
static double
htrans (const bl_fit_transform_info *t, double y)
{
  switch (t->kind) {
  case BL_TRANSFORM_LOG: return log (y);
  case BL_TRANSFORM_SQRT: return sqrt (y);
  case BL_TRANSFORM_BOXCOX:
    return t->lambda == 0.0 ? log (y) : expm1 (t->lambda * log (y)) / t->lambda;
  default: return y;
  }
}

/* P(Y <= x) for row i of a continuous fit at its ML dispersion, on y's original scale. */
static double
cdf_orig (const bl_fit *f, size_t i, double x)
{
  const double a = f->a ? f->a[i] : 1.0, mu = f->mu[i], phi = f->st.phi_ml;
  if (f->tr.kind != BL_TRANSFORM_NONE) {
    if (!(x > 0.0))
      return 0.0;
    return gsl_cdf_gaussian_P (htrans (&f->tr, x) - mu, sqrt (phi / a));
  }
  if (f->fam == &bl_family_gaussian)
    return gsl_cdf_gaussian_P (x - mu, sqrt (phi / a));
  if (!(x > 0.0))
    return 0.0;
  if (f->fam == &bl_family_gamma)
    return gsl_cdf_gamma_P (x, a / phi, mu * phi / a);
  {
    const double lam = a / phi, s = sqrt (lam / x);
    const double t2 = exp (2.0 * lam / mu + log (gsl_cdf_ugaussian_P (-s * (x / mu + 1.0))));
    return gsl_cdf_ugaussian_P (s * (x / mu - 1.0)) + (isfinite (t2) ? t2 : 0.0);
  }
}

static double
discrete_loglik (const bl_fit *f)
{
  long double l = 0.0L;
  if (f->fam == &bl_family_poisson || f->fam == &bl_family_negbin)
    return f->st.loglik;
  for (size_t i = 0; i < f->n; i++) {
    const double y = f->y_own && f->tr.kind != BL_TRANSFORM_NONE
                     ? bl_design_y (f->d)[i] : f->y[i];
    const double hi = cdf_orig (f, i, y + 0.5);
    const double lo = (y - 0.5 <= 0.0 && f->fam != &bl_family_gaussian)
                      || (f->tr.kind != BL_TRANSFORM_NONE && y - 0.5 <= 0.0)
                      || y <= 0.0 ? (f->fam == &bl_family_gaussian
                                     && f->tr.kind == BL_TRANSFORM_NONE && y > 0.0
                                     ? cdf_orig (f, i, y - 0.5) : 0.0)
                      : cdf_orig (f, i, y - 0.5);
    const double pr = hi - lo;
    if (!(pr > 0.0))
      return -HUGE_VAL;
    l += log (pr);
  }
  return (double) l;
}

/* The mean of y for a new row at linear predictor ETA (offset included) under fit F. */
static double
predict_mean (const bl_fit *f, double eta)
{
  if (f->method == BL_METHOD_GLM)
    return f->link->ginv (eta);
  if (f->tr.kind != BL_TRANSFORM_NONE)
    return bl_fit_backtransform (f, eta, 1);
  return eta;
}

/* Whether the caller's cancel flag (the one the fits poll, opt->fit.irls.cancel) is set: a
   cancelled fit comes back unconverged, and the loops below must not take it for a candidate
   that failed, so they poll the flag too and stop with BL_ECANCEL. */
static int
cancel_set (const bl_compare_opts *opt)
{
  return opt->fit.irls.cancel && *opt->fit.irls.cancel;
}

/* K-fold cross-validated RMSE and MAE of candidate K (spec SP) on D. */
static int
cross_validate (const bl_design *d, const bl_compare_opts *opt, const spec *sp, double lam,
                const size_t *fold, bl_candidate *k, bl_err *err)
{
  const size_t n = bl_design_n (d), p = bl_design_p (d), K = opt->folds;
  const double *y = bl_design_y (d), *off = bl_design_offset (d);
  size_t *sel = bl_mallocn (n, sizeof *sel);
  double *blk = bl_mallocn ((size_t) BL_IRLS_BLOCK * (p ? p : 1), sizeof *blk);
  long double se = 0.0L, ae = 0.0L;
  bl_fit_opts o;
  int st = BL_OK;
  if (!sel || !blk) {
    st = bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    goto done;
  }
  fit_opts_for (opt, sp, lam, &o);
  if (sp->tr == BL_TRANSFORM_BOXCOX && k->fit) {     /* lambda as estimated on all rows */
    o.lambda_est = 0;
    o.lambda = k->fit->tr.lambda;
  }
  o.se = BL_SE_MODEL;
  for (size_t g = 0; g < K; g++) {
    size_t m = 0;
    bl_design *sub;
    bl_fit *ft;
    bl_err e;
    if (cancel_set (opt)) {
      st = bl_fail (err, BL_ECANCEL, "compare", "the comparison was cancelled");
      goto done;
    }
    for (size_t i = 0; i < n; i++)
      if (fold[i] != g)
        sel[m++] = i;
    sub = bl_design_subset (d, sel, m, err);
    if (!sub) {
      st = BL_ENOMEM;
      goto done;
    }
    ft = bl_fit_glm (sub, &o, &e);
    if ((ft ? ft->status.code : e.code) == BL_ENOMEM) {
      /* exhaustion is the caller's error, not a note about the fold (compare.h) */
      st = bl_fail (err, BL_ENOMEM, "compare", "out of memory");
      bl_fit_free (ft);
      bl_design_free (sub);
      goto done;
    }
    if (!ft || !ft->st.converged) {
      if (bl_warnings_add (&k->notes, "cross-validation: fold %zu could not be fitted (%s)",
                           g + 1, ft ? ft->status.msg : e.msg) != BL_OK)
        st = bl_fail (err, BL_ENOMEM, "compare", "out of memory");
      bl_fit_free (ft);
      bl_design_free (sub);
      k->cv_rmse = k->cv_mae = NAN;
      goto done;
    }
    for (size_t r0 = 0; r0 < n; r0 += BL_IRLS_BLOCK) {
      const size_t nb = n - r0 < BL_IRLS_BLOCK ? n - r0 : BL_IRLS_BLOCK;
      int any = 0;
      for (size_t i = 0; i < nb && !any; i++)
        any = fold[r0 + i] == g;
      if (!any)
        continue;
      bl_design_fill (d, r0, nb, blk, BL_IRLS_BLOCK);
      for (size_t i = 0; i < nb; i++) {
        double eta = off ? off[r0 + i] : 0.0, res;
        if (fold[r0 + i] != g)
          continue;
        for (size_t j = 0; j < p; j++)
          if (!ft->aliased[j])
            eta += blk[i + j * BL_IRLS_BLOCK] * ft->beta[j];
        res = y[r0 + i] - predict_mean (ft, eta);
        se += (long double) res * res;
        ae += fabs (res);
      }
    }
    bl_fit_free (ft);
    bl_design_free (sub);
  }
  k->cv_rmse = sqrt ((double) (se / (long double) n));
  k->cv_mae = (double) (ae / (long double) n);
done:
  bl_free (sel);
  bl_free (blk);
  return st;
}

/* A seed for candidate ID that does not depend on which other candidates run (FNV-1a). */
static unsigned long
seed_for (unsigned long seed, const char *id)
{
  unsigned long h = 1469598103934665603UL ^ seed;
  for (const unsigned char *s = (const unsigned char *) id; *s; s++)
    h = (h ^ *s) * 1099511628211UL;
  return h;
}

static int
score (bl_candidate *k, const bl_compare_opts *opt, bl_err *err)
{
  bl_fit *f = k->fit;
  const size_t n = f->n;
  double *r = bl_mallocn (n ? n : 1, sizeof *r);
  gsl_rng *rng = gsl_rng_alloc (gsl_rng_mt19937);
  bl_spread sp;
  int st = BL_OK;
  if (!r || !rng) {
    st = bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    goto done;
  }
  gsl_rng_set (rng, seed_for (opt->seed, k->id));
  bl_pearson_residuals (f, r);
  if ((st = bl_spread_compute (f->mu, r, n, rng, opt->null_reps, &sp, err)) != BL_OK)
    goto done;
  k->spread_ratio = sp.ratio;
  k->spread_null95 = sp.null95;
  k->spread_flag = sp.flag;
  bl_spread_clear (&sp);
  /* each of these three passes takes about a second on a million rows: poll between them */
  if (cancel_set (opt)) {
    st = bl_fail (err, BL_ECANCEL, "compare", "the comparison was cancelled");
    goto done;
  }
  if ((st = bl_quantile_residuals (f, rng, r, err)) != BL_OK)
    goto done;
  if (cancel_set (opt)) {
    st = bl_fail (err, BL_ECANCEL, "compare", "the comparison was cancelled");
    goto done;
  }
  bl_ks_normal (r, n, &k->normality_stat, &k->normality_p);
done:
  bl_free (r);
  if (rng)
    gsl_rng_free (rng);
  return st;
}

static int
fit_candidate (bl_compare *c, size_t i, const bl_design *d, const bl_compare_opts *opt,
               int pos_y, int int_y, int nonneg_y, bl_err *err)
{
  bl_candidate *k = &c->c[i];
  const spec *sp = &c->sp[i];
  bl_fit_opts o;
  bl_err e;
  const char *why = NULL;
  cand_init (k, sp, c->lam[i]);
  k->n = bl_design_n (d);
  if (bl_design_offset (d) && sp->method != BL_METHOD_GLM)
    why = "not applicable: with an offset only GLM candidates are fitted";
  else if ((sp->tr != BL_TRANSFORM_NONE || sp->fam == &bl_family_gamma
            || sp->fam == &bl_family_invgauss) && !pos_y)
    why = "not applicable: it needs y > 0, and some y <= 0 (no rows are dropped to make it "
          "fit)";
  else if ((sp->fam == &bl_family_poisson || sp->fam == &bl_family_negbin) && !int_y)
    why = sp->fam == &bl_family_poisson ? "not applicable: poisson needs integer-valued y >= 0"
          : "not applicable: the negative binomial needs integer-valued y >= 0";
  else if (sp->fam == &bl_family_tweedie && c->default_list && !c->zero_groups)
    why = "left out by default: Tweedie is fitted when y >= 0 has exact zeros and non-integer "
          "values (ask for it with --candidates)";
  else if (sp->fam == &bl_family_tweedie && !nonneg_y)
    why = "not applicable: Tweedie needs y >= 0";
  if (why) {
    k->applicable = 0;
    return bl_warnings_add (&k->notes, "%s", why) == BL_OK ? BL_OK
           : bl_fail (err, BL_ENOMEM, "compare", "out of memory");
  }
  fit_opts_for (opt, sp, c->lam[i], &o);
  k->fit = bl_fit_glm (d, &o, &e);
  if (!k->fit) {
    if (e.code == BL_ENOMEM)
      return bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    return bl_warnings_add (&k->notes, "failed: %s%s%s", e.where, e.where[0] ? ": " : "",
                            e.msg) == BL_OK ? BL_OK
           : bl_fail (err, BL_ENOMEM, "compare", "out of memory");
  }
  {
    const bl_fit_stats *st = &k->fit->st;
    k->converged = st->converged;
    k->rank = st->rank;
    k->k = st->k;
    if (!st->converged)
      return bl_warnings_add (&k->notes, "failed: %s", k->fit->status.msg) == BL_OK ? BL_OK
             : bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    k->loglik = st->loglik;
    k->aic = st->aic;
    k->aicc = st->aicc;
    k->bic = st->bic;
    if (sp->tr == BL_TRANSFORM_BOXCOX)
      k->lambda = k->fit->tr.lambda;
    if (sp->var != BL_VARIANCE_NONE)
      k->variance_power = k->fit->var.power;
    if (sp->fam == &bl_family_negbin)
      k->theta = st->fam_par;
    if (sp->fam == &bl_family_tweedie)
      k->power = st->fam_par;
    for (size_t w = 0; w < k->fit->warn.n; w++)
      if (bl_warnings_add (&k->notes, "%s", k->fit->warn.msg[w]) != BL_OK)
        return bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    if (c->integer_y && isfinite (k->loglik)) {
      k->loglik_discrete = discrete_loglik (k->fit);
      k->aic_discrete = isfinite (k->loglik_discrete)
                        ? -2.0 * k->loglik_discrete + 2.0 * (double) k->k : NAN;
    }
  }
  return score (k, opt, err);
}

bl_compare *
bl_compare_run (const bl_design *d, const bl_compare_opts *opt, bl_err *err)
{
  bl_compare *c = bl_calloc (1, sizeof *c);
  const size_t n = bl_design_n (d);
  const double *y = bl_design_y (d);
  size_t *fold = NULL, *perm = NULL;
  int pos_y = 1, nonneg_y = 1, any_zero = 0, st = BL_OK;
  double wsum = 0.0;
  if (!c) {
    bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    return NULL;
  }
  c->folds = opt->folds;
  c->seed = opt->seed;
  c->winner = -1;
  c->integer_y = 1;
  c->default_list = opt->candidates == NULL;
  if (parse_list (opt->candidates ? opt->candidates : BL_COMPARE_DEFAULT, c, err) != BL_OK) {
    bl_free (c);
    return NULL;
  }
  for (size_t i = 0; i < n; i++) {
    pos_y &= y[i] > 0.0;
    nonneg_y &= y[i] >= 0.0;
    any_zero |= y[i] == 0.0;
    c->integer_y &= y[i] >= 0.0 && y[i] == floor (y[i]);
  }
  c->zero_groups = any_zero && nonneg_y && !c->integer_y;
  for (size_t i = 0; i < c->nc && st == BL_OK; i++) {
    if (cancel_set (opt)) {
      st = bl_fail (err, BL_ECANCEL, "compare", "the comparison was cancelled");
      break;
    }
    st = fit_candidate (c, i, d, opt, pos_y, c->integer_y, nonneg_y, err);
    /* the practical Box-Cox power, when it is not a transform already in the table */
    if (st == BL_OK && c->sp[i].tr == BL_TRANSFORM_BOXCOX && c->sp[i].lambda_est
        && c->c[i].fit && c->c[i].converged && c->nc < BL_COMPARE_MAX) {
      const double L = c->c[i].fit->tr.lambda_practical;
      char id[40];
      int dup = 0;
      if (isfinite (L) && L != 0.0 && L != 0.5 && L != 1.0) {
        snprintf (id, sizeof id, "ls-bc=%g", L);
        for (size_t j = 0; j < c->nc; j++)
          dup |= strcmp (c->c[j].id, id) == 0;
        if (!dup) {
          /* insert right after ls-bc */
          memmove (&c->c[i + 2], &c->c[i + 1], (c->nc - i - 1) * sizeof c->c[0]);
          memmove (&c->sp[i + 2], &c->sp[i + 1], (c->nc - i - 1) * sizeof c->sp[0]);
          memmove (&c->lam[i + 2], &c->lam[i + 1], (c->nc - i - 1) * sizeof c->lam[0]);
          memset (&c->c[i + 1], 0, sizeof c->c[0]);
          snprintf (c->c[i + 1].id, sizeof c->c[i + 1].id, "%s", id);
          lookup (id, &c->sp[i + 1], &c->lam[i + 1]);
          c->nc++;
        }
      }
    }
  }
  if (st == BL_OK && cancel_set (opt))        /* the last candidate's fit was cut short */
    st = bl_fail (err, BL_ECANCEL, "compare", "the comparison was cancelled");
  if (st != BL_OK)
    goto fail;

  /* ranking by rank_by over the converged candidates with a finite score; with exact zeros
     in non-integer y, within each group (a density and a mixed likelihood are not on one
     scale), the winner from the point-mass group when it has one */
  for (size_t i = 0; i < c->nc; i++)
    if (c->zero_groups)
      c->c[i].group = c->sp[i].fam == &bl_family_tweedie ? "point-mass" : "continuous";
  for (int pass = 0; pass < (c->zero_groups ? 2 : 1); pass++) {
    const char *grp = !c->zero_groups ? NULL : pass == 0 ? "point-mass" : "continuous";
    double gbest = HUGE_VAL;
    long gwin = -1;
    wsum = 0.0;
    for (size_t i = 0; i < c->nc; i++) {
      const double s = c->integer_y ? c->c[i].aic_discrete : c->c[i].aic;
      if (grp && strcmp (c->c[i].group, grp) != 0)
        continue;
      if (c->c[i].converged && isfinite (s) && s < gbest) {
        gbest = s;
        gwin = (long) i;
      }
    }
    for (size_t i = 0; i < c->nc; i++) {
      const double s = c->integer_y ? c->c[i].aic_discrete : c->c[i].aic;
      if (grp && strcmp (c->c[i].group, grp) != 0)
        continue;
      if (c->c[i].converged && isfinite (s)) {
        c->c[i].delta_aic = s - gbest;
        wsum += exp (-0.5 * c->c[i].delta_aic);
      }
    }
    for (size_t i = 0; i < c->nc; i++) {
      size_t pos = 1;
      if ((grp && strcmp (c->c[i].group, grp) != 0) || !isfinite (c->c[i].delta_aic))
        continue;
      c->c[i].akaike_weight = exp (-0.5 * c->c[i].delta_aic) / wsum;
      for (size_t j = 0; j < c->nc; j++)
        if (j != i && isfinite (c->c[j].delta_aic)
            && (!grp || strcmp (c->c[j].group, grp) == 0)
            && (c->c[j].delta_aic < c->c[i].delta_aic
                || (c->c[j].delta_aic == c->c[i].delta_aic && j < i)))
          pos++;
      c->c[i].rank_position = pos;
    }
    if (c->winner < 0 && gwin >= 0)
      c->winner = gwin;
  }

  /* cross-validation, with folds from one seeded permutation */
  if (opt->folds >= 2 && n >= opt->folds) {
    gsl_rng *rng = gsl_rng_alloc (gsl_rng_mt19937);
    fold = bl_mallocn (n, sizeof *fold);
    perm = bl_mallocn (n, sizeof *perm);
    if (!rng || !fold || !perm) {
      if (rng)
        gsl_rng_free (rng);
      bl_fail (err, BL_ENOMEM, "compare", "out of memory");
      goto fail;
    }
    gsl_rng_set (rng, opt->seed);
    for (size_t i = 0; i < n; i++)
      perm[i] = i;
    gsl_ran_shuffle (rng, perm, n, sizeof *perm);
    for (size_t i = 0; i < n; i++)
      fold[perm[i]] = i % opt->folds;
    gsl_rng_free (rng);
    for (size_t i = 0; i < c->nc; i++)
      if (c->c[i].converged
          && cross_validate (d, opt, &c->sp[i], c->lam[i], fold, &c->c[i], err) != BL_OK)
        goto fail;
  } else {
    c->folds = 0;
  }
  if (cancel_set (opt)) {             /* a fold's fit was cut short */
    bl_fail (err, BL_ECANCEL, "compare", "the comparison was cancelled");
    goto fail;
  }

  /* advice */
  if (c->winner >= 0) {
    const bl_candidate *w = &c->c[c->winner];
    if (bl_warnings_add (&c->advice, "ranked first by %s: %s (%s)",
                         c->integer_y ? "the discretized AIC" : "AIC", w->id,
                         w->description) != BL_OK)
      goto nomem;
    for (size_t i = 0; i < c->nc; i++)
      if ((long) i != c->winner && isfinite (c->c[i].delta_aic)
          && c->c[i].delta_aic < BL_COMPARE_DELTA
          && bl_warnings_add (&c->advice, "%s is within %g of the winner (delta %.3g): the "
                              "data do not separate them; prefer the simpler or the one "
                              "that predicts better", c->c[i].id, BL_COMPARE_DELTA,
                              c->c[i].delta_aic) != BL_OK)
        goto nomem;
    if (w->spread_flag
        && bl_warnings_add (&c->advice, "the winner's residual spread still changes across "
                            "the fitted range (ratio %.3g, above its null 95%% point %.3g): "
                            "its variance model does not fully account for the data",
                            w->spread_ratio, w->spread_null95) != BL_OK)
      goto nomem;
    {
      bl_diag_opts dopt;
      bl_diag *dg;
      bl_diag_opts_init (&dopt);
      dopt.seed = opt->seed;
      dopt.null_reps = 0;
      dopt.cancel = opt->fit.irls.cancel;
      dg = bl_diag_new (w->fit, &dopt, err);
      if (!dg)
        goto fail;
      if (bl_diag_get (dg)->lof.flag
          && bl_warnings_add (&c->advice, "the winner's residual means drift against the "
                              "fitted values or a term (lack of fit): fix the mean model (the "
                              "terms) before trusting any variance treatment") != BL_OK) {
        bl_diag_free (dg);
        goto nomem;
      }
      bl_diag_free (dg);
    }
  } else if (bl_warnings_add (&c->advice, "no candidate could be fitted and scored") != BL_OK) {
    goto nomem;
  }
  for (size_t i = 0; i < c->nc; i++)
    if (c->c[i].fit && c->c[i].converged && c->c[i].fit->fam == &bl_family_poisson
        && c->c[i].fit->st.phi_pearson > BL_FIT_OVERDISPERSION
        && bl_warnings_add (&c->advice, "poisson is overdispersed (Pearson chi2 / dof = %.3g): "
                            "its standard errors are too small and its likelihood too "
                            "confident", c->c[i].fit->st.phi_pearson) != BL_OK)
      goto nomem;
  if (c->zero_groups
      && bl_warnings_add (&c->advice, "y has exact zeros: only candidates with a point mass at "
                          "zero (Tweedie) can account for them; the continuous candidates "
                          "give zeros a density, not a probability, so they are ranked in a "
                          "group of their own and their AICs are not compared with "
                          "Tweedie's") != BL_OK)
    goto nomem;
  {
    const bl_candidate *po = NULL, *nb = NULL;
    for (size_t i = 0; i < c->nc; i++) {
      if (c->c[i].converged && c->sp[i].fam == &bl_family_poisson)
        po = &c->c[i];
      if (c->c[i].converged && c->sp[i].fam == &bl_family_negbin)
        nb = &c->c[i];
    }
    if (po && nb && isfinite (po->aic) && isfinite (nb->aic)) {
      const double gain = po->aic - nb->aic;
      int wst;
      if (gain > 10.0)
        wst = bl_warnings_add (&c->advice, "the negative binomial beats poisson by %.3g AIC "
                               "(theta %.3g): the counts are overdispersed, and poisson's "
                               "standard errors are too small", gain, nb->theta);
      else if (gain > BL_COMPARE_DELTA)
        wst = bl_warnings_add (&c->advice, "the negative binomial is better than poisson by "
                               "%.3g AIC (theta %.3g): some overdispersion, not a clear "
                               "margin; check with new data", gain, nb->theta);
      else if (gain > -BL_COMPARE_DELTA)
        wst = bl_warnings_add (&c->advice, "the negative binomial and poisson tie (AIC "
                               "difference %.3g): no clear overdispersion; the simpler "
                               "poisson suffices", gain);
      else
        wst = BL_OK;
      if (wst != BL_OK)
        goto nomem;
    }
  }
  if (bl_warnings_add (&c->advice, "a ranking is evidence, not proof: validate the chosen "
                       "model on new data before acting on it") != BL_OK)
    goto nomem;
  bl_free (fold);
  bl_free (perm);
  return c;
nomem:
  bl_fail (err, BL_ENOMEM, "compare", "out of memory");
fail:
  bl_free (fold);
  bl_free (perm);
  bl_compare_free (c);
  return NULL;
}

void
bl_compare_free (bl_compare *c)
{
  if (!c)
    return;
  for (size_t i = 0; i < c->nc; i++) {
    bl_fit_free (c->c[i].fit);
    bl_warnings_clear (&c->c[i].notes);
  }
  bl_warnings_clear (&c->advice);
  bl_free (c);
}

size_t bl_compare_count (const bl_compare *c) { return c->nc; }
const bl_candidate *bl_compare_get (const bl_compare *c, size_t i) { return &c->c[i]; }
const char *bl_compare_rank_by (const bl_compare *c)
{
  return c->integer_y ? "aic_discrete" : "aic";
}
long bl_compare_winner (const bl_compare *c) { return c->winner; }
const bl_warnings *bl_compare_advice (const bl_compare *c) { return &c->advice; }
size_t bl_compare_folds (const bl_compare *c) { return c->folds; }
unsigned long bl_compare_seed (const bl_compare *c) { return c->seed; }
int bl_compare_integer_y (const bl_compare *c) { return c->integer_y; }
int bl_compare_zero_groups (const bl_compare *c) { return c->zero_groups; }
