/* fit_transform.c -- ordinary least squares of a transformed response, reported on the original
   scale of y.

   With z = h(y) normal with mean x'b and variance sigma^2 / a, the density of y is the
   normal density of h(y) times the Jacobian |h'(y)|, so the original-scale log-likelihood is
     l = l_z + sum_i log h'(y_i)
   (Box & Cox 1964, J. R. Statist. Soc. B 26, 211-252, section 3): for log, -sum log y; for
   sqrt, sum (-log 2 - 0.5 log y); for Box-Cox (y^L - 1) / L, (L - 1) sum log y.  That sum is
   over rows, unweighted: prior weights change the variance of each row, not the change of
   variable.  Transformed and untransformed fits then share one AIC scale.

   lambda is estimated by maximizing this profile log-likelihood over [-3, 3]: a grid, then
   Brent's method (GSL) around the best grid point; its 95% interval is where the profile
   lies within chi2_1(0.95) / 2 = 1.92 of its top (Box & Cox 1964, section 4), found by root
   bracketing between grid points. */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "alloc.h"
#include "fit_engine.h"
#include "family_impl.h"
#include "fit_glm.h"
#include "profile.h"

/*
 * The Box-Cox response without cancellation.  With c a constant (the geometric mean of y,
 * rounded to a double) and t_i = log(y_i / c),
 *   z_i = (y_i^L - 1) / L = A (u_i + k),   u_i = expm1(L t_i) / L,
 *   A = c^L,   k = (1 - c^-L) / L = -expm1(-L log c) / L      (u_i = t_i, A = 1, k = log c
 *                                                              at L = 0),
 * an exact identity (from memory; the normalized power of Box & Cox 1964, section 3, with
 * the geometric mean moved inside the power).  u has geometric-mean-one ratios under its
 * power, so it straddles 0 and keeps every digit of its spread at any L and any scale of y,
 * while z itself is -1/L plus a small part when L < 0 and y is large (y near 2e4 at
 * L = -2.7: z = 0.37037... + 1e-12 terms, the spread held by 4 of a double's 16 digits).
 * Least squares is linear in the response, so the fit of z is A times the fit of u + k:
 *   with an intercept: beta_z = A (beta_u + k e_1), residuals A r_u;
 *   without:           beta_z = A (beta_u + k beta_1), residuals A (r_u + k r_1),
 * beta_1 and r_1 being the fit of the constant 1 on X (made once).  Nothing is subtracted
 * that has lost its digits.  The normal log-likelihood of z at the ML dispersion, with prior
 * weights a_i > 0 (common practice, no source),
 *   l_z = -n/2 (log 2 pi + log(RSS_z / n) + 1) + 1/2 sum log a_i,   RSS_z = A^2 RSS_v,
 * v = r_u (+ k r_1); with the Jacobian (L - 1) sum log y_i = (L - 1)(n log c + sum t_i) the
 * original-scale profile is
 *   l(L) = -n/2 (log 2 pi + log(RSS_v / n) + 1) + 1/2 sum log a_i - n log c + (L - 1) sum t_i,
 * free of the large terms -n L log c that cancel, and finite wherever RSS_v is, even where
 * z itself overflows a double.
 */
typedef struct prof_ctx {
  const bl_design *d;
  const bl_fit_opts *opt;     /* gaussian identity, no transform */
  const double *ys;           /* y + shift, length n */
  const double *t;            /* log(ys_i / c), length n */
  double logc;                /* log c */
  double sumlog;              /* sum log(y + shift) */
  double sumt, sumloga;       /* sum t_i; sum log a_i (0 without weights) */
  int intercept;
  const double *beta1, *mu1;  /* no intercept: the fit of the constant 1 (else NULL) */
  double *z;                  /* work: the response u */
  const char *why;            /* why the first null profile point is null, else NULL */
  int status;                 /* first hard error (ENOMEM), else BL_OK */
  bl_err *err;
} prof_ctx;

/* A, k and log A of the identity above at LAMBDA. */
static void
bc_scale (double lambda, double logc, double *A, double *k, double *logA)
{
  if (lambda == 0.0) {
    *logA = 0.0;
    *A = 1.0;
    *k = logc;
    return;
  }
  *logA = lambda * logc;
  *A = exp (*logA);
  *k = -expm1 (-lambda * logc) / lambda;
}

/* u_i = expm1(L t_i) / L, t_i at L = 0. */
static void
bc_u (const double *t, size_t n, double lambda, double *u)
{
  for (size_t i = 0; i < n; i++)
    u[i] = (lambda == 0.0) ? t[i] : expm1 (lambda * t[i]) / lambda;
}

/* Box-Cox (y^L - 1) / L = expm1(L log y) / L, and log y at L = 0: z itself, as a double
   rounds it (the response the fit reports). */
static void
boxcox (const double *ys, size_t n, double lambda, double *z)
{
  for (size_t i = 0; i < n; i++)
    z[i] = (lambda == 0.0) ? log (ys[i]) : expm1 (lambda * log (ys[i])) / lambda;
}

/* RSS_v = sum a_i v_i^2 of fit F of u (the residual sum of squares of z / A, see above),
   in long double, and *SSU = sum a_i u_i^2. */
static long double
rss_v (const prof_ctx *c, const bl_fit *f, double k, long double *ssu)
{
  const size_t n = f->n;
  long double s = 0.0L, su = 0.0L;
  for (size_t i = 0; i < n; i++) {
    const double ai = f->a ? f->a[i] : 1.0;
    const long double v = (long double) f->y[i] - f->mu[i]
                          + (c->intercept ? 0.0L : (long double) k * (1.0 - c->mu1[i]));
    s += ai * v * v;
    su += (long double) ai * f->y[i] * f->y[i];
  }
  *ssu = su;
  return s;
}

/* The residual sum of squares of z at LAMBDA, as RSS_v = RSS_z / A^2 (the one least-squares
   pass per power: a later shared QR of X gives it for every response at once).  Returns
   BL_OK with *RSS set, or BL_EDOM-like -1 with C->why saying why the point has no
   likelihood (or C->status set on a hard error). */
static int
boxcox_rss (prof_ctx *c, double lambda, long double *rss)
{
  const size_t n = bl_design_n (c->d);
  double A, k, logA;
  long double ssu;
  bl_fit *f;
  bl_err e;
  int st = BL_OK;
  bc_scale (lambda, c->logc, &A, &k, &logA);
  bc_u (c->t, n, lambda, c->z);
  f = bl_fit_core (c->d, c->z, NULL, c->opt, 1, &e);
  if (!f) {
    if (e.code == BL_ENOMEM && c->status == BL_OK) {
      c->status = BL_ENOMEM;
      if (c->err)
        *c->err = e;
    }
    if (!c->why)
      c->why = "the least-squares fit at this power failed (its response is out of range "
               "for double precision)";
    return -1;
  }
  if (!f->st.converged) {
    if (!c->why)
      c->why = "the least-squares fit at this power did not converge";
    st = -1;
  } else {
    *rss = c->intercept ? (long double) f->st.deviance : rss_v (c, f, k, &ssu);
    if (c->intercept ? f->st.perfect : *rss <= 1e-24L * ssu) {
      if (!c->why)
        c->why = "a perfect fit at this power: zero residual variance, no likelihood";
      st = -1;
    } else if (!(*rss > 0.0L && isfinite ((double) *rss))) {
      if (!c->why)
        c->why = "the residual sum of squares at this power is out of range";
      st = -1;
    }
  }
  bl_fit_free (f);
  return st;
}

/* The original-scale profile log-likelihood at LAMBDA (-HUGE_VAL when it does not exist,
   with the reason in the context). */
static double
profile (double lambda, void *arg)
{
  prof_ctx *c = arg;
  const double n = (double) bl_design_n (c->d);
  long double rss;
  double l;
  /* the caller's cancel flag (polled inside each fit too): no more profile fits, and the
     run fails with BL_ECANCEL rather than go on through a grid of cancelled fits */
  if (c->opt->irls.cancel && *c->opt->irls.cancel) {
    if (c->status == BL_OK)
      c->status = bl_fail (c->err, BL_ECANCEL, "transform", "the fit was cancelled");
    return -HUGE_VAL;
  }
  if (boxcox_rss (c, lambda, &rss) != BL_OK)
    return -HUGE_VAL;
  l = -0.5 * n * (BL_LOG_2PI + (double) logl (rss / (long double) n) + 1.0)
      + 0.5 * c->sumloga - n * c->logc + (lambda - 1.0) * c->sumt;
  if (!isfinite (l)) {
    if (!c->why)
      c->why = "the profile log-likelihood at this power is not finite";
    return -HUGE_VAL;
  }
  return l;
}

/* Record that GSL could not allocate a solver (its own malloc, outside alloc.h). */
static void
nomem (prof_ctx *c)
{
  if (c->status == BL_OK)
    c->status = bl_fail (c->err, BL_ENOMEM, "transform", "out of memory");
}

/* The smearing sums of fit F (bl_fit_transform_info), in row order. */
static void
smear_sums (bl_fit *f)
{
  long double se = 0.0L, s1 = 0.0L, s2 = 0.0L;
  double emin = HUGE_VAL;
  for (size_t i = 0; i < f->n; i++) {
    const double e = f->y[i] - f->mu[i];
    se += exp (e);
    s1 += e;
    s2 += (long double) e * e;
    if (e < emin)
      emin = e;
  }
  f->tr.smear_sum_exp = se;
  f->tr.smear_sum = s1;
  f->tr.smear_sum_sq = s2;
  f->tr.smear_min = emin;
}

/* Fit F of u (bl_fit_core) moved to the scale of z = A (u + k) at LAMBDA: coefficients,
   fitted values, the response, deviances, dispersions, covariance and log-likelihood, as
   the identity at the head of this file gives them.  Also the digits the transformed-scale
   residuals keep as differences of doubles, with a note below BL_BOXCOX_DIGITS. */
static int
to_z_scale (const prof_ctx *c, bl_fit *f, double lambda, bl_err *err)
{
  const size_t n = f->n, p = f->p;
  double A, k, logA, zmax = 0.0;
  long double rss, ssu, szz = 0.0L, svv = 0.0L;
  bl_fit_stats *st = &f->st;
  bc_scale (lambda, c->logc, &A, &k, &logA);
  rss = rss_v (c, f, k, &ssu);
  /* the unweighted mean square of v, for the digits below */
  for (size_t i = 0; i < n; i++) {
    const long double v = (long double) f->y[i] - f->mu[i]
                          + (c->intercept ? 0.0L : (long double) k * (1.0 - c->mu1[i]));
    svv += v * v;
  }
  for (size_t j = 0; j < p; j++)
    if (!f->aliased[j])
      f->beta[j] = A * (f->beta[j] + (c->intercept ? (j == 0 ? k : 0.0) : k * c->beta1[j]));
  for (size_t i = 0; i < n; i++)
    f->mu[i] = f->eta[i] = A * (f->mu[i] + (c->intercept ? k : k * c->mu1[i]));
  boxcox (c->ys, n, lambda, f->y_own);
  for (size_t i = 0; i < n; i++) {
    const double ai = f->a ? f->a[i] : 1.0;
    szz += (long double) ai * f->y_own[i] * f->y_own[i];
    if (fabs (f->y_own[i]) > zmax)
      zmax = fabs (f->y_own[i]);
  }
  {
    const long double A2 = (long double) A * A;
    const double dev = (double) (A2 * rss);
    if (!isfinite (A) || !(A > 0.0) || !isnormal (dev) || !isnormal (A * A)) {
      char where[1100];
      snprintf (where, sizeof where, "%s", bl_design_source (c->d));
      return bl_fail (err, BL_EDATA, where, "the Box-Cox response (y^L - 1) / L of '%s' at "
                      "L = %g is out of range for double precision (its scale (geometric "
                      "mean)^L = %g); rescale y, e.g. by a power of ten", bl_design_response
                      (c->d), lambda, A);
    }
    if (!c->intercept && !st->perfect && rss <= 1e-24L * ssu)
      st->perfect = 1;
    st->deviance = st->pearson = dev;
    st->phi_pearson = st->dof_resid > 0 ? dev / (double) st->dof_resid : NAN;
    st->phi_ml = st->perfect ? 0.0 : dev / (double) n;
    st->phi_used = st->dof_resid > 0 ? st->phi_pearson : NAN;
    if (isfinite (st->deviance_null))
      st->deviance_null = c->intercept ? (double) (A2 * (long double) st->deviance_null)
                                       : (double) szz;
  }
  for (size_t j = 0; j < p; j++)
    for (size_t l = 0; l < p; l++)
      f->cov[j + l * p] = (f->aliased[j] || f->aliased[l]) ? NAN
                          : f->cov_unscaled[j + l * p] * st->phi_used;
  bl_fit_wald_table (f);
  if (st->perfect) {
    st->loglik = st->aic = st->aicc = st->bic = NAN;
    st->loglik_why = "perfect fit: zero residual variance makes the likelihood unbounded";
    st->aicc_why = st->loglik_why;
  } else {
    const double l = -0.5 * (double) n * (BL_LOG_2PI + 2.0 * logA
                                           + (double) logl (rss / (long double) n) + 1.0)
                     + 0.5 * c->sumloga;
    bl_fit_set_loglik (f, l, st->k);
  }
  /* The digits the residuals y_i - mu_i keep as differences of two doubles near |z|max:
     log10(rms residual / (eps |z|max)) (common practice, no source). */
  {
    const double rms = A * sqrt ((double) (svv / (long double) n));
    const double dg = zmax > 0.0 && rms > 0.0 ? floor (log10 (rms / (DBL_EPSILON * zmax)))
                                              : 17.0;
    f->tr.digits_kept = dg > 17.0 ? 17 : dg < 0.0 ? 0 : (int) dg;
    if (f->tr.digits_kept < BL_BOXCOX_DIGITS
        && bl_warnings_add (&f->warn, "at lambda = %.6g the transformed response lies within "
                            "%.2g (relative) of its constant -1/lambda: the coefficients, "
                            "likelihood and profile were computed without that cancellation, "
                            "but the transformed-scale residuals (smearing, robust standard "
                            "errors, diagnostics) keep about %d significant digits",
                            lambda, rms / zmax, f->tr.digits_kept) != BL_OK)
      return bl_fail (err, BL_ENOMEM, "transform", "out of memory");
  }
  return BL_OK;
}

/* The fit of z at LAMBDA (Box-Cox, or the log at 0) carried out on u: NULL with ERR set. */
static bl_fit *
boxcox_fit (prof_ctx *c, double lambda, bl_err *err)
{
  bl_fit *f;
  bc_u (c->t, bl_design_n (c->d), lambda, c->z);
  if (!(f = bl_fit_core (c->d, c->z, NULL, c->opt, 0, err)))
    return NULL;
  if (f->st.converged && to_z_scale (c, f, lambda, err) != BL_OK) {
    bl_fit_free (f);
    return NULL;
  }
  if (!f->st.converged)
    boxcox (c->ys, f->n, lambda, f->y_own);
  return f;
}

/* The searches of the Box-Cox profile: the maximum by Brent's method to 1e-10 in lambda, at
   most 200 profile fits, stopping when an iteration makes no more progress (Brent's steps are
   at least sqrt(DBL_EPSILON) |x| (GSL), so the bracket of a lambda above about 0.01 never
   gets within 1e-10: stop once an iteration leaves both ends where they were, x no longer
   changes); the interval ends by Brent's root bracketing to 1e-12, at most 200 fits each. */
static const bl_profile_tol boxcox_max_tol = { 1e-10, 0.0, 200, 1 };
static const bl_profile_tol boxcox_root_tol = { 1e-12, 0.0, 200, 0 };

/* The practical power: the multiple of 0.5 inside [LO, HI] (the range's ends where open)
   nearest lambda-hat LAMBDA, ties to the higher profile (common practice, no source). */
static double
practical_power (prof_ctx *pc, double lambda, double lo, double hi)
{
  const double a = isfinite (lo) ? lo : BL_BOXCOX_MIN, b = isfinite (hi) ? hi : BL_BOXCOX_MAX;
  double practical = NAN, best_l = -HUGE_VAL;
  for (double cand = ceil (2.0 * a) / 2.0; cand <= b + 1e-12; cand += 0.5) {
    const double dist = fabs (cand - lambda);
    const double pv = profile (cand, pc);
    if (!isfinite (practical) || dist < fabs (practical - lambda) - 1e-12
        || (fabs (dist - fabs (practical - lambda)) <= 1e-12 && pv > best_l)) {
      practical = cand == 0.0 ? 0.0 : cand;   /* ceil of a small negative is -0 */
      best_l = pv;
    }
  }
  return practical;
}

/* lambda estimated: the global maximum of the profile over [BL_BOXCOX_MIN, BL_BOXCOX_MAX]
   (bl_profile_search: a scan every BL_BOXCOX_GRID, Brent's method inside the best point's
   neighbours), its 95% interval, the practical power, and the fit at lambda-hat carrying
   the profile; a maximum at an end of the range is said (lambda_edge and a note).  This is
   the one search of lambda: `fit --transform boxcox` and the comparer's ls-bc candidate both
   reach it through bl_fit_new.  *LAMBDA_OUT is lambda-hat.  NULL with ERR set on failure. */
static bl_fit *
boxcox_estimate (prof_ctx *pc, double *lambda_out, bl_err *err)
{
  const size_t ng = bl_profile_npoints (BL_BOXCOX_MIN, BL_BOXCOX_MAX, 1.0 / BL_BOXCOX_GRID);
  double *grid = bl_mallocn (ng, sizeof *grid), *val = bl_mallocn (ng, sizeof *val);
  double lo = NAN, hi = NAN, practical;
  bl_profile_max mx;
  bl_fit *f;
  size_t m = 0;
  if (!grid || !val) {
    bl_free (grid);
    bl_free (val);
    bl_fail (err, BL_ENOMEM, "transform", "out of memory");
    return NULL;
  }
  if (bl_profile_search (profile, pc, BL_BOXCOX_MIN, BL_BOXCOX_MAX, ng, grid, val, &pc->status,
                         &boxcox_max_tol, &mx) != BL_OK)
    nomem (pc);
  for (size_t j = 0; j < ng; j++)
    if (val[j] > val[m])
      m = j;
  if (pc->status != BL_OK || !(mx.fx > -HUGE_VAL)) {
    bl_free (grid);
    bl_free (val);
    if (pc->status == BL_OK)
      bl_fail (err, BL_ENOCONV, "--transform", "the Box-Cox profile likelihood could not be "
               "evaluated at any power in [%g, %g]: %s", BL_BOXCOX_MIN, BL_BOXCOX_MAX,
               pc->why ? pc->why : "no power gave a likelihood");
    return NULL;
  }
  /* the interval: a solver GSL could not allocate is an error, not an open interval */
  if (bl_profile_interval (profile, pc, grid, val, ng, m, mx.x,
                           bl_profile_threshold (mx.fx, BL_PROFILE_LEVEL), &boxcox_root_tol,
                           &lo, &hi) != BL_OK)
    nomem (pc);
  practical = practical_power (pc, mx.x, lo, hi);
  if (pc->status != BL_OK || !(f = boxcox_fit (pc, mx.x, err))) {
    bl_free (grid);
    bl_free (val);
    return NULL;
  }
  f->prof_lambda = grid;
  f->prof_loglik = val;
  f->tr.nprofile = ng;
  f->tr.profile_lambda = grid;
  f->tr.profile_loglik = val;
  f->tr.lambda_lo = lo;
  f->tr.lambda_hi = hi;
  f->tr.lambda_practical = practical;
  f->tr.lambda_estimated = 1;
  f->tr.lambda_edge = mx.edge;
  f->tr.lambda_lo_why = isfinite (lo) ? "" : "the profile does not fall 1.92 below its top "
                        "between lambda-hat and the lower end of the search range";
  f->tr.lambda_hi_why = isfinite (hi) ? "" : "the profile does not fall 1.92 below its top "
                        "between lambda-hat and the upper end of the search range";
  for (size_t j = 0; j < ng; j++)
    if (!(val[j] > -HUGE_VAL))
      f->tr.profile_why = pc->why ? pc->why : "no likelihood at this power";
  if (mx.edge != 0
      && bl_warnings_add (&f->warn, "the Box-Cox profile is highest at the %s end of its "
                          "search range, lambda = %g: the maximum may lie beyond it, and "
                          "lambda-hat is that end", mx.edge < 0 ? "lower" : "upper",
                          mx.x) != BL_OK) {
    bl_fit_free (f);
    bl_fail (err, BL_ENOMEM, "transform", "out of memory");
    return NULL;
  }
  *lambda_out = mx.x;
  return f;
}

/* The checks before a transformed fit of D: the options that cannot be combined with a
   transform, a Box-Cox power in range, and y + C0 > 0 on every row (NAME the transform, for
   the messages).  Returns BL_OK, or the failure with ERR saying why. */
static int
transform_check (const bl_design *d, const bl_fit_opts *opt, double c0, const char *name,
                 bl_err *err)
{
  const size_t n = bl_design_n (d);
  const double *y = bl_design_y (d);
  const double lambda = opt->lambda;
  size_t bad = 0, first = 0;

  if ((opt->fam && !bl_family_has (opt->fam, BL_FAM_NORMAL))
      || (opt->link && opt->link != &bl_link_identity))
    return bl_fail (err, BL_ESPEC, "--transform", "a transformed response is fitted by "
                    "ordinary least squares: leave out --family and --link");
  if (opt->method == BL_METHOD_WLS)
    return bl_fail (err, BL_ESPEC, "--transform", "--method wls and --transform cannot be "
                    "combined (prior --weights may be given)");
  if (bl_design_offset (d))
    return bl_fail (err, BL_ESPEC, "--offset", "an offset applies to GLMs only, not to a "
                    "transformed response");
  if (opt->transform == BL_TRANSFORM_BOXCOX && !opt->lambda_est
      && !(lambda >= BL_BOXCOX_MIN && lambda <= BL_BOXCOX_MAX))
    return bl_fail (err, BL_ESPEC, "--transform", "the Box-Cox power must lie in [%g, %g], "
                    "not %g", BL_BOXCOX_MIN, BL_BOXCOX_MAX, lambda);
  for (size_t i = 0; i < n; i++)
    if (!(y[i] + c0 > 0.0) && bad++ == 0)
      first = i;
  if (bad) {
    char where[1100];
    snprintf (where, sizeof where, "%s:%zu", bl_design_source (d), bl_design_line (d, first));
    if (opt->shift_given)
      return bl_fail (err, BL_EDATA, where, "'%s' + %g has %zu value%s <= 0 (first: %.17g); "
                      "the %s transform needs y + shift > 0", bl_design_response (d), c0, bad,
                      bad == 1 ? "" : "s", y[first] + c0, name);
    return bl_fail (err, BL_EDATA, where, "'%s' has %zu value%s <= 0 (first: %.17g); the %s "
                    "transform needs y > 0 (give --shift C to transform y + C)",
                    bl_design_response (d), bad, bad == 1 ? "" : "s", y[first], name);
  }
  return BL_OK;
}

/* Mark F as the fit of the transformed response (NAME, power LAMBDA, shift C0) and move its
   log-likelihood to the original scale by the log-Jacobian of the change of variable
   (SUMLOG = sum log(y_i + c0) over the N rows). */
static void
transform_mark (bl_fit *f, const bl_fit_opts *opt, double lambda, double c0, const char *name,
                double sumlog, size_t n)
{
  double jac = 0.0;
  /* The log-Jacobian of the change of variable. */
  switch (opt->transform) {
  case BL_TRANSFORM_LOG: jac = -sumlog; break;
  case BL_TRANSFORM_SQRT: jac = -(double) n * M_LN2 - 0.5 * sumlog; break;
  default: jac = (lambda - 1.0) * sumlog; break;
  }
  f->tr.kind = opt->transform;
  f->tr.name = name;
  f->tr.lambda = opt->transform == BL_TRANSFORM_BOXCOX ? lambda : NAN;
  f->tr.shift_given = opt->shift_given;
  f->tr.shift = c0;
  smear_sums (f);
  f->method = BL_METHOD_OLS;
  if (f->st.converged) {
    f->st.loglik_transformed = f->st.loglik;
    if (isfinite (f->st.loglik))
      bl_fit_set_loglik (f, f->st.loglik + jac, f->st.k + (f->tr.lambda_estimated ? 1u : 0u));
    else
      f->st.k += f->tr.lambda_estimated ? 1u : 0u;
  }
}

/* The context of the profile and of the final fit: t_i = log(ys_i / c) with c the geometric
   mean of YS (N rows) rounded to a double, the sums, and without an intercept the fit of the
   constant 1 (*ONES, freed by the caller).  T is caller's scratch of N.  BL_OK or an error. */
static int
prof_setup (prof_ctx *pc, const double *ys, double *t, bl_fit **ones, bl_err *err)
{
  const bl_design *d = pc->d;
  const size_t n = bl_design_n (d);
  const double *a = bl_design_prior_w (d);
  long double sl = 0.0L, st = 0.0L, sa = 0.0L;
  double c;
  for (size_t i = 0; i < n; i++) {
    sl += log (ys[i]);
    if (a)
      sa += log (a[i]);
  }
  c = exp ((double) (sl / (long double) n));
  if (!(c > 0.0 && isfinite (c)))
    c = 1.0;                    /* a geometric mean beyond a double: no centering */
  pc->logc = log (c);
  for (size_t i = 0; i < n; i++) {
    t[i] = log (ys[i] / c);
    st += t[i];
  }
  pc->ys = ys;
  pc->t = t;
  pc->sumlog = (double) sl;
  pc->sumt = (double) st;
  pc->sumloga = (double) sa;
  pc->intercept = bl_design_has_intercept (d);
  pc->beta1 = pc->mu1 = NULL;
  pc->why = NULL;
  pc->status = BL_OK;
  pc->err = err;
  *ones = NULL;
  if (!pc->intercept) {
    for (size_t i = 0; i < n; i++)
      pc->z[i] = 1.0;
    if (!(*ones = bl_fit_core (d, pc->z, NULL, pc->opt, 1, err)))
      return err ? err->code : BL_ENOMEM;
    if (!(*ones)->st.converged)
      return bl_fail (err, BL_ENOCONV, "transform", "the least-squares fit of a constant on "
                      "the terms did not converge: %s", (*ones)->status.msg);
    for (size_t j = 0; j < (*ones)->p; j++)
      if ((*ones)->aliased[j])
        (*ones)->beta[j] = 0.0;
    pc->beta1 = (*ones)->beta;
    pc->mu1 = (*ones)->mu;
  }
  return BL_OK;
}

bl_fit *
bl_fit_transform_run (const bl_design *d, const bl_fit_opts *opt, bl_err *err)
{
  const size_t n = bl_design_n (d);
  const double *y = bl_design_y (d);
  const double c0 = opt->shift_given ? opt->shift : 0.0;
  bl_fit_opts o = *opt;
  prof_ctx pc;
  double *ys = NULL, *z = NULL, *t = NULL, lambda = opt->lambda;
  bl_fit *f = NULL, *ones = NULL;
  const char *name = opt->transform == BL_TRANSFORM_LOG ? "log"
                     : opt->transform == BL_TRANSFORM_SQRT ? "sqrt" : "boxcox";

  if (transform_check (d, opt, c0, name, err) != BL_OK)
    return NULL;
  ys = bl_mallocn (n, sizeof *ys);
  z = bl_mallocn (n, sizeof *z);
  t = bl_mallocn (n, sizeof *t);
  if (!ys || !z || !t)
    goto nomem;
  for (size_t i = 0; i < n; i++)
    ys[i] = y[i] + c0;
  o.transform = BL_TRANSFORM_NONE;
  o.method = BL_METHOD_OLS;
  o.fam = &bl_family_gaussian;
  o.link = &bl_link_identity;
  o.se = BL_SE_MODEL;
  pc.d = d;
  pc.opt = &o;
  pc.z = z;
  if (prof_setup (&pc, ys, t, &ones, err) != BL_OK)
    goto done;

  if (opt->transform == BL_TRANSFORM_BOXCOX && opt->lambda_est) {
    if (!(f = boxcox_estimate (&pc, &lambda, err)))
      goto done;
  } else if (opt->transform == BL_TRANSFORM_SQRT) {
    /* sqrt(y) = sqrt(c) sqrt(y / c): a scale, no constant to cancel */
    for (size_t i = 0; i < n; i++)
      z[i] = sqrt (ys[i]);
    if (!(f = bl_fit_core (d, z, NULL, &o, 0, err)))
      goto done;
  } else {
    /* log y = log c + t: the Box-Cox fit at lambda 0, carried on t */
    if (!(f = boxcox_fit (&pc, opt->transform == BL_TRANSFORM_LOG ? 0.0 : lambda, err)))
      goto done;
    if (opt->transform == BL_TRANSFORM_BOXCOX) {
      f->tr.lambda_lo_why = f->tr.lambda_hi_why = "lambda was fixed: no interval";
    }
  }
  transform_mark (f, opt, lambda, c0, name, pc.sumlog, n);
  if (opt->shift_given
      && bl_warnings_add (&f->warn, "the response was shifted by %g before the %s transform; "
                          "every result depends on that choice", c0, name) != BL_OK) {
    bl_fit_free (f);
    f = NULL;
    goto nomem;
  }
  goto done;
nomem:
  bl_fail (err, BL_ENOMEM, "transform", "out of memory");
done:
  bl_fit_free (ones);
  bl_free (ys);
  bl_free (z);
  bl_free (t);
  return f;
}

/* h^-1 for the fit's transform at Z (on the transformed scale), before the shift is undone. */
static double
inverse_transform (const bl_fit_transform_info *t, double z)
{
  switch (t->kind) {
  case BL_TRANSFORM_LOG: return exp (z);
  case BL_TRANSFORM_SQRT: return z > 0.0 ? z * z : 0.0;
  case BL_TRANSFORM_BOXCOX:
    if (t->lambda == 0.0)
      return exp (z);
    /* y = (1 + L z)^(1/L) where 1 + L z > 0; outside, the power has no real value and the
       mean is taken at the boundary of the range (0 or +inf), as in Duan 1983 */
    {
      const double u = fma (t->lambda, z, 1.0);   /* 1 + L z rounded once */
      if (u <= 0.0)
        return t->lambda > 0.0 ? 0.0 : HUGE_VAL;
      return exp (log (u) / t->lambda);
    }
  default: return z;
  }
}

/*
 * The mean of y at linear predictor XB (transformed scale), undoing any shift:
 *   smeared:  (1/n) sum_i h^-1(xb + e_i) - shift   (Duan 1983, JASA 78, 605-610), with e_i
 *             the fit's transformed-scale residuals; for log this is exp(xb) mean(exp(e_i));
 *   naive:    h^-1(xb) - shift, the median of y when the transformed errors are symmetric.
 * For a fit without a transform both are XB.
 */
double
bl_fit_backtransform (const bl_fit *f, double xb, int smear)
{
  const bl_fit_transform_info *t = &f->tr;
  const size_t n = f->n;
  long double s = 0.0L;
  size_t stride, cnt = 0;
  if (t->kind == BL_TRANSFORM_NONE)
    return xb;
  if (!smear || n == 0)
    return inverse_transform (t, xb) - t->shift;
  switch (t->kind) {
  case BL_TRANSFORM_LOG:
    /* exp(xb) mean(exp(e_i)) */
    return exp (xb) * (double) (t->smear_sum_exp / (long double) n) - t->shift;
  case BL_TRANSFORM_SQRT:
    /* mean((xb + e)^2) = xb^2 + 2 xb mean(e) + mean(e^2); the back-transform of sqrt is
       taken as z^2 on the whole line here (the clipping at 0 changes nothing where xb + e_i
       >= 0 for all i, that is xb + min e_i >= 0, the usual case) */
    if (xb + t->smear_min < 0.0)
      goto general;
    return (double) ((long double) xb * xb + 2.0L * xb * t->smear_sum / (long double) n
                     + t->smear_sum_sq / (long double) n) - t->shift;
  default:
    break;
  }
general:
  /* the general sum; above BL_SMEAR_MAX residuals, every stride-th (a deterministic
     subsample, in row order) */
  stride = n > BL_SMEAR_MAX ? (n + BL_SMEAR_MAX - 1) / BL_SMEAR_MAX : 1;
  for (size_t i = 0; i < n; i += stride, cnt++)
    s += inverse_transform (t, xb + (f->y[i] - f->mu[i]));
  return (double) (s / (long double) cnt) - t->shift;
}
