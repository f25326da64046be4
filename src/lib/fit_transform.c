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
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "alloc.h"
#include "fit_engine.h"
#include "fit_glm.h"
#include "profile.h"

typedef struct prof_ctx {
  const bl_design *d;
  const bl_fit_opts *opt;     /* gaussian identity, no transform */
  const double *ys;           /* y + shift, length n */
  double sumlog;              /* sum log(y + shift) */
  double *z;                  /* work: the transformed response */
  int status;                 /* first hard error (ENOMEM), else BL_OK */
  bl_err *err;
} prof_ctx;

/* Box-Cox (y^L - 1) / L = expm1(L log y) / L, and log y at L = 0. */
static void
boxcox (const double *ys, size_t n, double lambda, double *z)
{
  for (size_t i = 0; i < n; i++)
    z[i] = (lambda == 0.0) ? log (ys[i]) : expm1 (lambda * log (ys[i])) / lambda;
}

/* The original-scale profile log-likelihood at LAMBDA (-HUGE_VAL when it does not exist). */
static double
profile (double lambda, void *arg)
{
  prof_ctx *c = arg;
  const size_t n = bl_design_n (c->d);
  bl_fit *f;
  bl_err e;
  double l;
  /* the caller's cancel flag (polled inside each fit too): no more profile fits, and the
     run fails with BL_ECANCEL rather than go on through a grid of cancelled fits */
  if (c->opt->irls.cancel && *c->opt->irls.cancel) {
    if (c->status == BL_OK)
      c->status = bl_fail (c->err, BL_ECANCEL, "transform", "the fit was cancelled");
    return -HUGE_VAL;
  }
  boxcox (c->ys, n, lambda, c->z);
  f = bl_fit_core (c->d, c->z, NULL, c->opt, 1, &e);
  if (!f) {
    if (e.code == BL_ENOMEM && c->status == BL_OK) {
      c->status = BL_ENOMEM;
      if (c->err)
        *c->err = e;
    }
    return -HUGE_VAL;
  }
  l = f->st.loglik + (lambda - 1.0) * c->sumlog;
  bl_fit_free (f);
  return isfinite (l) ? l : -HUGE_VAL;
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

/* The searches of the Box-Cox profile: the maximum by Brent's method to 1e-10 in lambda, at
   most 200 profile fits, stopping when an iteration makes no more progress (Brent's steps are
   at least sqrt(DBL_EPSILON) |x| (GSL), so the bracket of a lambda above about 0.01 never
   gets within 1e-10: stop once an iteration leaves both ends where they were, x no longer
   changes); the interval ends by Brent's root bracketing to 1e-12, at most 200 fits each. */
static const bl_profile_tol boxcox_max_tol = { 1e-10, 0.0, 200, 1 };
static const bl_profile_tol boxcox_root_tol = { 1e-12, 0.0, 200, 0 };

/* lambda estimated: the profile on a grid over [BL_BOXCOX_MIN, BL_BOXCOX_MAX], its maximum
   and 95% interval, the practical power, and the fit at lambda-hat carrying the profile.
   *LAMBDA_OUT is lambda-hat.  NULL with ERR set on failure. */
static bl_fit *
boxcox_estimate (prof_ctx *pc, double *lambda_out, bl_err *err)
{
  const bl_design *d = pc->d;
  const size_t n = bl_design_n (d);
  double lambda;
  bl_fit *f;
  const size_t ng = (size_t) lround ((BL_BOXCOX_MAX - BL_BOXCOX_MIN) / BL_BOXCOX_GRID) + 1;
  double *grid = bl_mallocn (ng, sizeof *grid), *val = bl_mallocn (ng, sizeof *val);
  double top, lo = NAN, hi = NAN, practical = NAN, best_l = -HUGE_VAL;
  size_t m = 0;
  if (!grid || !val) {
    bl_free (grid);
    bl_free (val);
    bl_fail (err, BL_ENOMEM, "transform", "out of memory");
    return NULL;
  }
  m = bl_profile_grid (profile, pc, BL_BOXCOX_MIN, BL_BOXCOX_GRID, ng, grid, val, NULL);
  if (pc->status != BL_OK || !(val[m] > -HUGE_VAL)) {
    bl_free (grid);
    bl_free (val);
    if (pc->status == BL_OK)
      bl_fail (err, BL_ENOCONV, "--transform", "the Box-Cox profile likelihood could not be "
               "evaluated at any power in [%g, %g]", BL_BOXCOX_MIN, BL_BOXCOX_MAX);
    return NULL;
  }
  /* lambda-hat: the best grid point, refined by Brent's method inside its neighbours (the
     grid point itself when the maximum is at an end of [-3, 3]); a solver GSL could not
     allocate is an error, not the grid point as if refined */
  if (bl_profile_refine (profile, pc, grid, val, ng, m, &boxcox_max_tol, &lambda) != BL_OK)
    nomem (pc);
  top = profile (lambda, pc);
  if (top < val[m]) {            /* keep the grid point if refining did not improve it */
    lambda = grid[m];
    top = val[m];
  }
  /* the interval: a solver GSL could not allocate is an error, not an open interval */
  if (bl_profile_interval (profile, pc, grid, val, ng, m, lambda,
                           bl_profile_threshold (top, BL_PROFILE_LEVEL), &boxcox_root_tol,
                           &lo, &hi) != BL_OK)
    nomem (pc);
  /* The practical power: the multiple of 0.5 inside the interval nearest lambda-hat, ties
     to the higher profile (common practice, no source). */
  {
    const double a = isfinite (lo) ? lo : BL_BOXCOX_MIN, b = isfinite (hi) ? hi : BL_BOXCOX_MAX;
    for (double cand = ceil (2.0 * a) / 2.0; cand <= b + 1e-12; cand += 0.5) {
      const double dist = fabs (cand - lambda);
      const double pv = profile (cand, pc);
      if (!isfinite (practical) || dist < fabs (practical - lambda) - 1e-12
          || (fabs (dist - fabs (practical - lambda)) <= 1e-12 && pv > best_l)) {
        practical = cand == 0.0 ? 0.0 : cand;   /* ceil of a small negative is -0 */
        best_l = pv;
      }
    }
  }
  if (pc->status != BL_OK) {
    bl_free (grid);
    bl_free (val);
    return NULL;
  }
  boxcox (pc->ys, n, lambda, pc->z);
  f = bl_fit_core (d, pc->z, NULL, pc->opt, 0, err);
  if (!f) {
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
  *lambda_out = lambda;
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

bl_fit *
bl_fit_transform_run (const bl_design *d, const bl_fit_opts *opt, bl_err *err)
{
  const size_t n = bl_design_n (d);
  const double *y = bl_design_y (d);
  const double c0 = opt->shift_given ? opt->shift : 0.0;
  bl_fit_opts o = *opt;
  prof_ctx pc;
  double *ys = NULL, *z = NULL, lambda = opt->lambda;
  long double sl = 0.0L;
  bl_fit *f = NULL;
  const char *name = opt->transform == BL_TRANSFORM_LOG ? "log"
                     : opt->transform == BL_TRANSFORM_SQRT ? "sqrt" : "boxcox";

  if (transform_check (d, opt, c0, name, err) != BL_OK)
    return NULL;
  ys = bl_mallocn (n, sizeof *ys);
  z = bl_mallocn (n, sizeof *z);
  if (!ys || !z)
    goto nomem;
  for (size_t i = 0; i < n; i++) {
    ys[i] = y[i] + c0;
    sl += log (ys[i]);
  }
  o.transform = BL_TRANSFORM_NONE;
  o.method = BL_METHOD_OLS;
  o.fam = &bl_family_gaussian;
  o.link = &bl_link_identity;
  o.se = BL_SE_MODEL;
  pc.d = d;
  pc.opt = &o;
  pc.ys = ys;
  pc.sumlog = (double) sl;
  pc.z = z;
  pc.status = BL_OK;
  pc.err = err;

  if (opt->transform == BL_TRANSFORM_BOXCOX && opt->lambda_est) {
    if (!(f = boxcox_estimate (&pc, &lambda, err)))
      goto done;
  } else {
    if (opt->transform == BL_TRANSFORM_LOG)
      for (size_t i = 0; i < n; i++)
        z[i] = log (ys[i]);
    else if (opt->transform == BL_TRANSFORM_SQRT)
      for (size_t i = 0; i < n; i++)
        z[i] = sqrt (ys[i]);
    else
      boxcox (ys, n, lambda, z);
    f = bl_fit_core (d, z, NULL, &o, 0, err);
    if (!f)
      goto done;
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
  bl_free (ys);
  bl_free (z);
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
      const double u = 1.0 + t->lambda * z;
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
