/* compare.c -- candidates on one row set, scored on the original response's scale.

   Every candidate is fitted by bl_fit_new with the options `ballast fit` would use, so its
   AIC is the one `fit` reports.  Scores:
   - AIC = -2 l + 2 k (Akaike 1974), delta to the best, Akaike weights exp(-delta/2) / sum
     (Burnham & Anderson 2002, Model Selection and Multimodel Inference, 2nd ed., 2.9);
   - integer y: a continuous candidate's density is not comparable with a count model's
     probabilities, so each is also scored by the discretized likelihood
     sum log P(y_i - 1/2 < Y_i <= y_i + 1/2) at its fitted parameters (the lower end clipped
     to the support: y = 0 takes all the mass below 1/2), and the ranking uses it;
   - cross-validated prediction error on y's scale (folds seeded; transformed candidates
     back-transformed with Duan's smearing of the training residuals; compare_cv.c);
   - the spread ratio of its own Pearson residuals and a Kolmogorov-Smirnov statistic of its
     quantile residuals (Dunn & Smyth 1996). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_rng.h>
#include "alloc.h"
#include "compare_impl.h"
#include "diag.h"
#include "family_tails.h"

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

void
bl_compare_opts_init (bl_compare_opts *opt)
{
  opt->candidates = NULL;
  opt->folds = BL_COMPARE_FOLDS;
  opt->folds_default = 0;
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
  k->family = bl_family_name (sp->fam);
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

void
bl_compare_fit_opts (const bl_compare_opts *opt, const spec *sp, double lam, bl_fit_opts *o)
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

/* h(b) - h(y) of a transformed fit without the cancellation of two values of h that agree
   in most digits (a Box-Cox response near its constant -1/L at large y and L < 0, where
   h(y + 1/2) - h(y) is below the rounding of h(y)): with d = (b - y) / y,
   log: log1p(d); sqrt: (b - y) / (sqrt b + sqrt y); Box-Cox: y^L expm1(L log1p(d)) / L
   (common practice, no source). */
static double
hdiff (const bl_fit_transform_info *t, double y, double b)
{
  const double d = (b - y) / y;
  switch (t->kind) {
  case BL_TRANSFORM_LOG: return log1p (d);
  case BL_TRANSFORM_SQRT: return (b - y) / (sqrt (b) + sqrt (y));
  case BL_TRANSFORM_BOXCOX:
    return t->lambda == 0.0 ? log1p (d)
           : exp (t->lambda * log (y)) * expm1 (t->lambda * log1p (d)) / t->lambda;
  default: return b - y;
  }
}

/* log P(lo < Y <= hi) for row i of a continuous fit at its ML dispersion, on y's original
   scale, LO = -HUGE_VAL for the whole mass below HI: for a transformed fit the normal
   interval (h(lo) - mu, h(hi) - mu] / sigma, else the family's log interval (its gamma scale
   as mu phi / a, BL_FAM_SCALE_MUL, the rounding this score always had).  Both are taken on
   the side of the distribution that holds the interval, in log space (family.h), so a row
   9 or 40 sd from its mean keeps its digits instead of a difference of two CDFs that round
   to 1. */
static double
log_interval_orig (const bl_fit *f, size_t i, double lo, double hi)
{
  const double *pw = bl_fit_prior_w (f);
  const double a = pw ? pw[i] : 1.0, mu = bl_fit_mu (f)[i], phi = bl_fit_stats_get (f)->phi_ml;
  const bl_fit_transform_info *tr = bl_fit_transform (f);
  if (tr->kind != BL_TRANSFORM_NONE) {
    /* h(b) - mu as (h(b) - h(y)) + (z_i - mu_i), y = HI - 1/2 the row's value */
    const double s = sqrt (phi / a), y = hi - 0.5, r = bl_fit_y (f)[i] - mu;
    return bl_tail_norm_log_interval (lo > 0.0 ? (hdiff (tr, y, lo) + r) / s : -HUGE_VAL,
                                      (hdiff (tr, y, hi) + r) / s);
  }
  return bl_family_log_interval (bl_fit_family (f), lo, hi, mu, a, phi, bl_fit_family_par (f),
                                 BL_FAM_SCALE_MUL);
}

/* The discretized log-likelihood sum log P(y - 1/2 < Y <= y + 1/2) over the integer y >= 0,
   the lower end clipped at y = 0 (all the mass below 1/2); a discrete family's own
   log-likelihood already is one.  -HUGE_VAL when a row has no mass at all (*ROW its index),
   which is then said in the candidate's notes. */
static double
discrete_loglik (const bl_fit *f, size_t *row)
{
  const size_t n = bl_fit_n (f);
  const double *yo = bl_fit_y_original (f);
  long double l = 0.0L;
  if (bl_family_has (bl_fit_family (f), BL_FAM_DISCRETE))
    return bl_fit_stats_get (f)->loglik;
  for (size_t i = 0; i < n; i++) {
    const double y = yo[i];
    const double lp = log_interval_orig (f, i, y > 0.0 ? y - 0.5 : -HUGE_VAL, y + 0.5);
    if (!isfinite (lp)) {
      *row = i;
      return -HUGE_VAL;
    }
    l += lp;
  }
  return (double) l;
}

/* Whether the caller's cancel flag (the one the fits poll, opt->fit.irls.cancel) is set: a
   cancelled fit comes back unconverged, and the loops below (and the cross-validation's,
   compare_cv.c) must not take it for a candidate that failed, so they poll the flag too and
   stop with BL_ECANCEL. */
int
bl_compare_cancelled (const bl_compare_opts *opt)
{
  return opt->fit.irls.cancel && *opt->fit.irls.cancel;
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
  const bl_fit *f = k->fit;
  const size_t n = bl_fit_n (f);
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
  if ((st = bl_spread_compute (bl_fit_mu (f), r, n, rng, opt->null_reps, &sp, err)) != BL_OK)
    goto done;
  k->spread_ratio = sp.ratio;
  k->spread_null95 = sp.null95;
  k->spread_flag = sp.flag;
  bl_spread_clear (&sp);
  /* each of these three passes takes about a second on a million rows: poll between them */
  if (bl_compare_cancelled (opt)) {
    st = bl_fail (err, BL_ECANCEL, "compare", "the comparison was cancelled");
    goto done;
  }
  if ((st = bl_quantile_residuals (f, rng, r, err)) != BL_OK)
    goto done;
  if (bl_compare_cancelled (opt)) {
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

/* What bl_compare_run learns of y once: every y > 0 (the transforms' need) and every
   y >= 0; each family's own support test is asked per candidate (applicable). */
typedef struct yscan {
  int pos_y, nonneg_y;
} yscan;

/* Whether every y of D lies in FAM's support (the family's own test). */
static int
in_support (const bl_family *fam, const bl_design *d)
{
  const size_t n = bl_design_n (d);
  const double *y = bl_design_y (d);
  for (size_t i = 0; i < n; i++)
    if (!bl_family_y_ok (fam, y[i]))
      return 0;
  return 1;
}

/* Why candidate SP is not fitted to D, written to BUF (LEN bytes), or NULL when it is.  The
   family's reasons come from its descriptor: its support and the complement's text, its
   name in a sentence, and the properties (a count family needs integer y; a family with a
   point mass at 0 is fitted by default only when y has exact zeros and non-integer
   values). */
static const char *
applicable (const bl_compare *c, const spec *sp, const bl_design *d, const yscan *ys,
            char *buf, size_t len)
{
  const bl_family *fam = sp->fam;
  const int discrete = bl_family_has (fam, BL_FAM_DISCRETE);
  const int mass = bl_family_has (fam, BL_FAM_ZERO_MASS);
  if (bl_design_offset (d) && sp->method != BL_METHOD_GLM)
    return "not applicable: with an offset only GLM candidates are fitted";
  if (sp->tr != BL_TRANSFORM_NONE && !ys->pos_y)
    return "not applicable: it needs y > 0, and some y <= 0 (no rows are dropped to make it "
           "fit)";
  if (!discrete && !mass && !in_support (fam, d))
    snprintf (buf, len, "not applicable: it needs %s, and some %s (no rows are dropped to "
              "make it fit)", bl_family_support (fam), bl_family_outside (fam));
  else if (discrete && !c->integer_y)
    snprintf (buf, len, "not applicable: %s needs integer-valued %s", bl_family_noun (fam),
              bl_family_support (fam));
  else if (mass && c->default_list && !c->zero_groups)
    snprintf (buf, len, "left out by default: %s is fitted when %s has exact zeros and "
              "non-integer values (ask for it with --candidates)", bl_family_noun (fam),
              bl_family_support (fam));
  else if (mass && !in_support (fam, d))
    snprintf (buf, len, "not applicable: %s needs %s", bl_family_noun (fam),
              bl_family_support (fam));
  else
    return NULL;
  return buf;
}

/* Add a note to candidate K: BL_OK, or BL_ENOMEM in ERR. */
#define NOTE(k, ...) (bl_warnings_add (&(k)->notes, __VA_ARGS__) == BL_OK ? BL_OK \
                      : bl_fail (err, BL_ENOMEM, "compare", "out of memory"))

/* Copy a converged fit's figures into candidate K and score it. */
static int
take_fit (bl_compare *c, bl_candidate *k, const spec *sp, const bl_compare_opts *opt,
          bl_err *err)
{
  const bl_fit_stats *st = bl_fit_stats_get (k->fit);
  const bl_warnings *fw = bl_fit_warnings (k->fit);
  k->loglik = st->loglik;
  k->aic = st->aic;
  k->aicc = st->aicc;
  k->bic = st->bic;
  if (sp->tr == BL_TRANSFORM_BOXCOX)
    k->lambda = bl_fit_transform (k->fit)->lambda;
  if (sp->var != BL_VARIANCE_NONE)
    k->variance_power = bl_fit_variance (k->fit)->power;
  if (bl_family_par_kind (sp->fam) == BL_FAMPAR_THETA)
    k->theta = st->fam_par;
  if (bl_family_par_kind (sp->fam) == BL_FAMPAR_POWER)
    k->power = st->fam_par;
  for (size_t w = 0; w < fw->n; w++)
    if (NOTE (k, "%s", fw->msg[w]) != BL_OK)
      return BL_ENOMEM;
  if (c->integer_y && isfinite (k->loglik)) {
    size_t row = 0;
    k->loglik_discrete = discrete_loglik (k->fit, &row);
    k->aic_discrete = isfinite (k->loglik_discrete)
                      ? -2.0 * k->loglik_discrete + 2.0 * (double) k->k : NAN;
    if (!isfinite (k->loglik_discrete)
        && NOTE (k, "not ranked: the discretized likelihood is 0 at the %zu-th row used (y = %g): the "
                 "fitted distribution puts no mass on (y - 1/2, y + 1/2]", row + 1,
                 bl_fit_y_original (k->fit)[row]) != BL_OK)
      return BL_ENOMEM;
  }
  return score (k, opt, err);
}

static int
fit_candidate (bl_compare *c, size_t i, const bl_design *d, const bl_compare_opts *opt,
               const yscan *ys, bl_err *err)
{
  bl_candidate *k = &c->c[i];
  const spec *sp = &c->sp[i];
  bl_fit_opts o;
  bl_err e;
  char buf[256];
  const char *why;
  cand_init (k, sp, c->lam[i]);
  k->n = bl_design_n (d);
  if ((why = applicable (c, sp, d, ys, buf, sizeof buf)) != NULL) {
    k->applicable = 0;
    return NOTE (k, "%s", why);
  }
  bl_compare_fit_opts (opt, sp, c->lam[i], &o);
  k->fit = bl_fit_new (d, &o, &e);
  if (!k->fit) {
    if (e.code == BL_ENOMEM)
      return bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    return NOTE (k, "failed: %s%s%s", e.where, e.where[0] ? ": " : "", e.msg);
  }
  {
    const bl_fit_stats *st = bl_fit_stats_get (k->fit);
    k->converged = st->converged;
    k->rank = st->rank;
    k->k = st->k;
    if (!st->converged)
      return NOTE (k, "failed: %s", bl_fit_status (k->fit)->msg);
  }
  return take_fit (c, k, sp, opt, err);
}

/* After candidate I (ls-bc, lambda estimated) converged: insert ls-bc=L right after it for
   the practical Box-Cox power L, when it is not a transform already in the table. */
static void
add_practical (bl_compare *c, size_t i)
{
  const double L = bl_fit_transform (c->c[i].fit)->lambda_practical;
  char id[40];
  int dup = 0;
  if (!isfinite (L) || L == 0.0 || L == 0.5 || L == 1.0)
    return;
  snprintf (id, sizeof id, "ls-bc=%g", L);
  for (size_t j = 0; j < c->nc; j++)
    dup |= strcmp (c->c[j].id, id) == 0;
  if (dup)
    return;
  memmove (&c->c[i + 2], &c->c[i + 1], (c->nc - i - 1) * sizeof c->c[0]);
  memmove (&c->sp[i + 2], &c->sp[i + 1], (c->nc - i - 1) * sizeof c->sp[0]);
  memmove (&c->lam[i + 2], &c->lam[i + 1], (c->nc - i - 1) * sizeof c->lam[0]);
  memset (&c->c[i + 1], 0, sizeof c->c[0]);
  snprintf (c->c[i + 1].id, sizeof c->c[i + 1].id, "%s", id);
  lookup (id, &c->sp[i + 1], &c->lam[i + 1]);
  c->nc++;
}

/* Fit and score every candidate, polling the cancel flag between them. */
static int
fit_all (bl_compare *c, const bl_design *d, const bl_compare_opts *opt, const yscan *ys,
         bl_err *err)
{
  int st = BL_OK;
  for (size_t i = 0; i < c->nc && st == BL_OK; i++) {
    if (bl_compare_cancelled (opt))
      return bl_fail (err, BL_ECANCEL, "compare", "the comparison was cancelled");
    st = fit_candidate (c, i, d, opt, ys, err);
    if (st == BL_OK && c->sp[i].tr == BL_TRANSFORM_BOXCOX && c->sp[i].lambda_est
        && c->c[i].fit && c->c[i].converged && c->nc < BL_COMPARE_MAX)
      add_practical (c, i);
  }
  if (st == BL_OK && bl_compare_cancelled (opt))  /* the last candidate's fit was cut short */
    st = bl_fail (err, BL_ECANCEL, "compare", "the comparison was cancelled");
  return st;
}

/* Whether candidate I is ranked in group GRP (NULL: a single group). */
static int
in_group (const bl_compare *c, size_t i, const char *grp)
{
  return !grp || strcmp (c->c[i].group, grp) == 0;
}

/* Deltas, Akaike weights and positions by rank_by within group GRP; returns its best
   candidate's index or -1. */
static long
rank_group (bl_compare *c, const char *grp)
{
  double gbest = HUGE_VAL, wsum = 0.0;
  long gwin = -1;
  for (size_t i = 0; i < c->nc; i++) {
    const double s = c->integer_y ? c->c[i].aic_discrete : c->c[i].aic;
    if (in_group (c, i, grp) && c->c[i].converged && isfinite (s) && s < gbest) {
      gbest = s;
      gwin = (long) i;
    }
  }
  for (size_t i = 0; i < c->nc; i++) {
    const double s = c->integer_y ? c->c[i].aic_discrete : c->c[i].aic;
    if (in_group (c, i, grp) && c->c[i].converged && isfinite (s)) {
      c->c[i].delta_aic = s - gbest;
      wsum += exp (-0.5 * c->c[i].delta_aic);
    }
  }
  for (size_t i = 0; i < c->nc; i++) {
    size_t pos = 1;
    if (!in_group (c, i, grp) || !isfinite (c->c[i].delta_aic))
      continue;
    c->c[i].akaike_weight = exp (-0.5 * c->c[i].delta_aic) / wsum;
    for (size_t j = 0; j < c->nc; j++)
      if (j != i && isfinite (c->c[j].delta_aic) && in_group (c, j, grp)
          && (c->c[j].delta_aic < c->c[i].delta_aic
              || (c->c[j].delta_aic == c->c[i].delta_aic && j < i)))
        pos++;
    c->c[i].rank_position = pos;
  }
  return gwin;
}

/* Ranking by rank_by over the converged candidates with a finite score; with exact zeros in
   non-integer y, within each group (a density and a mixed likelihood are not on one scale:
   a family with a point mass at 0 ranks in the point-mass group), the winner from the
   point-mass group when it has one. */
static void
rank_all (bl_compare *c)
{
  for (size_t i = 0; i < c->nc; i++)
    if (c->zero_groups)
      c->c[i].group = bl_family_has (c->sp[i].fam, BL_FAM_ZERO_MASS) ? "point-mass"
                      : "continuous";
  for (int pass = 0; pass < (c->zero_groups ? 2 : 1); pass++) {
    const char *grp = !c->zero_groups ? NULL : pass == 0 ? "point-mass" : "continuous";
    const long gwin = rank_group (c, grp);
    if (c->winner < 0 && gwin >= 0)
      c->winner = gwin;
  }
}

/* Add an advice line: BL_OK, or BL_ENOMEM in ERR. */
#define ADVISE(...) (bl_warnings_add (&c->advice, __VA_ARGS__) == BL_OK ? BL_OK \
                     : bl_fail (err, BL_ENOMEM, "compare", "out of memory"))

/* The advice about the winner: why it won, its ties, its spread and its lack of fit. */
static int
advise_winner (bl_compare *c, const bl_compare_opts *opt, bl_err *err)
{
  const bl_candidate *w = &c->c[c->winner];
  bl_diag_opts dopt;
  bl_diag *dg;
  int st;
  /* with exact zeros the deltas are within each ranking group (rank_all), so the ties are
     spoken of within the winner's group only, and the line says which group that is */
  if (c->zero_groups) {
    if (ADVISE ("ranked first by %s within the %s group, which holds the recommendation: %s "
                "(%s)", c->integer_y ? "the discretized AIC" : "AIC", w->group, w->id,
                w->description) != BL_OK)
      return BL_ENOMEM;
  } else if (ADVISE ("ranked first by %s: %s (%s)", c->integer_y ? "the discretized AIC"
                     : "AIC", w->id, w->description) != BL_OK) {
    return BL_ENOMEM;
  }
  for (size_t i = 0; i < c->nc; i++) {
    if ((long) i == c->winner || !isfinite (c->c[i].delta_aic)
        || c->c[i].delta_aic >= BL_COMPARE_DELTA
        || (c->zero_groups && strcmp (c->c[i].group, w->group) != 0))
      continue;
    if (c->zero_groups
        ? ADVISE ("%s is within %g of the winner in the %s group (delta %.3g): the data do "
                  "not separate them; prefer the simpler or the one that predicts better",
                  c->c[i].id, BL_COMPARE_DELTA, w->group, c->c[i].delta_aic)
        : ADVISE ("%s is within %g of the winner (delta %.3g): the data do not separate "
                  "them; prefer the simpler or the one that predicts better", c->c[i].id,
                  BL_COMPARE_DELTA, c->c[i].delta_aic))
      return BL_ENOMEM;
  }
  if (w->spread_flag
      && ADVISE ("the winner's residual spread still changes across the fitted range (ratio "
                 "%.3g, above its null 95%% point %.3g): its variance model does not fully "
                 "account for the data", w->spread_ratio, w->spread_null95) != BL_OK)
    return BL_ENOMEM;
  bl_diag_opts_init (&dopt);
  dopt.seed = opt->seed;
  dopt.null_reps = 0;
  dopt.cancel = opt->fit.irls.cancel;
  if (!(dg = bl_diag_new (w->fit, &dopt, err)))
    return err ? err->code : BL_EINTERNAL;
  st = bl_diag_get (dg)->lof.flag
       ? ADVISE ("the winner's residual means drift against the fitted values or a term "
                 "(lack of fit): fix the mean model (the terms) before trusting any variance "
                 "treatment") : BL_OK;
  bl_diag_free (dg);
  return st;
}

/* The advice on a family whose dispersion the Pearson statistic tests (BL_FAM_OVERDISP)
   when it is overdispersed. */
static int
advise_overdisp (bl_compare *c, bl_err *err)
{
  for (size_t i = 0; i < c->nc; i++) {
    const bl_fit *f = c->c[i].fit;
    if (f && c->c[i].converged && bl_family_has (bl_fit_family (f), BL_FAM_OVERDISP)
        && bl_fit_stats_get (f)->phi_pearson > BL_FIT_OVERDISPERSION
        && ADVISE ("%s is overdispersed (Pearson chi2 / dof = %.3g): its standard errors are "
                   "too small and its likelihood too confident",
                   bl_family_name (bl_fit_family (f)), bl_fit_stats_get (f)->phi_pearson)
           != BL_OK)
      return BL_ENOMEM;
  }
  return BL_OK;
}

/* The comparison, from the properties, of that count family (BL_FAM_OVERDISP) with the one
   that adds a theta to its variance (BL_FAMPAR_THETA). */
static int
advise_theta (bl_compare *c, bl_err *err)
{
  long po = -1, nb = -1;
  double gain;
  const char *pn, *nn;
  for (size_t i = 0; i < c->nc; i++) {
    if (c->c[i].converged && bl_family_has (c->sp[i].fam, BL_FAM_OVERDISP))
      po = (long) i;
    if (c->c[i].converged && bl_family_par_kind (c->sp[i].fam) == BL_FAMPAR_THETA)
      nb = (long) i;
  }
  if (po < 0 || nb < 0 || !isfinite (c->c[po].aic) || !isfinite (c->c[nb].aic))
    return BL_OK;
  gain = c->c[po].aic - c->c[nb].aic;
  pn = bl_family_noun (c->sp[po].fam);
  nn = bl_family_noun (c->sp[nb].fam);
  if (gain > 10.0)
    return ADVISE ("%s beats %s by %.3g AIC (theta %.3g): the counts are overdispersed, and "
                   "%s's standard errors are too small", nn, pn, gain, c->c[nb].theta, pn);
  if (gain > BL_COMPARE_DELTA)
    return ADVISE ("%s is better than %s by %.3g AIC (theta %.3g): some overdispersion, not a "
                   "clear margin; check with new data", nn, pn, gain, c->c[nb].theta);
  if (gain > -BL_COMPARE_DELTA)
    return ADVISE ("%s and %s tie (AIC difference %.3g): no clear overdispersion; the simpler "
                   "%s suffices", nn, pn, gain, pn);
  return BL_OK;
}

static int
advise (bl_compare *c, const bl_compare_opts *opt, bl_err *err)
{
  int st;
  if (c->winner >= 0)
    st = advise_winner (c, opt, err);
  else
    st = ADVISE ("no candidate could be fitted and scored");
  if (st != BL_OK)
    return st;
  if (advise_overdisp (c, err) != BL_OK)
    return BL_ENOMEM;
  if (c->zero_groups
      && ADVISE ("y has exact zeros: only candidates with a point mass at zero (Tweedie) can "
                 "account for them; the continuous candidates give zeros a density, not a "
                 "probability, so they are ranked in a group of their own and their AICs are "
                 "not compared with Tweedie's") != BL_OK)
    return BL_ENOMEM;
  if (advise_theta (c, err) != BL_OK)
    return BL_ENOMEM;
  return ADVISE ("a ranking is evidence, not proof: validate the chosen model on new data "
                 "before acting on it");
}

bl_compare *
bl_compare_run (const bl_design *d, const bl_compare_opts *opt, bl_err *err)
{
  bl_compare *c = bl_calloc (1, sizeof *c);
  const size_t n = bl_design_n (d);
  const double *y = bl_design_y (d);
  yscan ys = { 1, 1 };
  int any_zero = 0, st;
  if (!c) {
    bl_fail (err, BL_ENOMEM, "compare", "out of memory");
    return NULL;
  }
  c->folds = opt->folds;
  c->seed = opt->seed;
  c->winner = -1;
  c->integer_y = 1;
  c->default_list = opt->candidates == NULL;
  if ((st = parse_list (opt->candidates ? opt->candidates : BL_COMPARE_DEFAULT, c, err))
      != BL_OK)
    goto done;
  for (size_t i = 0; i < n; i++) {
    ys.pos_y &= y[i] > 0.0;
    ys.nonneg_y &= y[i] >= 0.0;
    any_zero |= y[i] == 0.0;
    c->integer_y &= y[i] >= 0.0 && y[i] == floor (y[i]);
  }
  c->zero_groups = any_zero && ys.nonneg_y && !c->integer_y;
  if ((st = fit_all (c, d, opt, &ys, err)) != BL_OK)
    goto done;
  rank_all (c);
  if ((st = bl_compare_cv (c, d, opt, err)) != BL_OK)
    goto done;
  st = advise (c, opt, err);
done:
  if (st != BL_OK) {
    bl_compare_free (c);
    return NULL;
  }
  return c;
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
