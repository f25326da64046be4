/* fit_tweedie.c -- the Tweedie engine: the power p (1 < p < 2) estimated by maximum profile
   likelihood around IRLS for the coefficients.

   Tweedie (1 < p < 2): for fixed p, IRLS gives beta (the dispersion does not enter it), and
   phi maximizes the series log-likelihood (tweedie.h) by Brent's method on log phi; p
   maximizes the profile log-likelihood over (1, 2) (a grid, then Brent's method), and its
   95% interval is where the profile lies within chi2_1(0.95) / 2 of its top (Dunn & Smyth
   2005, section 6; Jorgensen 1997).  k = rank + 1 (phi) + 1 when p is estimated. */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_min.h>
#include <gsl/gsl_roots.h>
#include "alloc.h"
#include "fit_engine.h"
#include "fit_glm.h"

#define TW_GRID_LO 1.1
#define TW_GRID_HI 1.9
#define TW_GRID_STEP 0.1


typedef struct tw_ctx {
  const bl_design *d;
  bl_fit_opts o;
  const double *y, *mu, *a;
  size_t n;
  double p;
  int status;
  bl_err *err;
  double thr;
} tw_ctx;

static double
tw_negll_logphi (double t, void *arg)
{
  const tw_ctx *c = arg;
  double l;
  /* cancelled (the fits' flag): no value, so that the search for phi ends at once */
  if (c->o.irls.cancel && *c->o.irls.cancel)
    return HUGE_VAL;
  l = bl_family_loglik_p (c->o.fam, c->y, c->mu, c->a, c->n, exp (t), c->p);
  return isfinite (l) ? -l : HUGE_VAL;
}

/* phi-hat given the means: Brent's method on log phi, bracketed around the Pearson value. */
static double
tw_phi_ml (tw_ctx *c, double phi0, double *ll)
{
  gsl_function F = { tw_negll_logphi, c };
  gsl_min_fminimizer *s = gsl_min_fminimizer_alloc (gsl_min_fminimizer_brent);
  double lo = log (phi0) - 7.0, hi = log (phi0) + 7.0, x = log (phi0);
  double fx = tw_negll_logphi (x, c), flo = tw_negll_logphi (lo, c);
  double fhi = tw_negll_logphi (hi, c);
  if (!s) {
    c->status = BL_ENOMEM;
    return NAN;
  }
  /* walk the start inward until it is below both ends (the likelihood is unimodal in
     log phi) */
  for (int k = 0; k < 60 && !(fx < flo && fx < fhi); k++) {
    if (flo < fhi) {
      hi = x;
      fhi = fx;
    } else {
      lo = x;
      flo = fx;
    }
    x = 0.5 * (lo + hi);
    fx = tw_negll_logphi (x, c);
  }
  if (fx < flo && fx < fhi
      && gsl_min_fminimizer_set_with_values (s, &F, x, fx, lo, flo, hi, fhi) == GSL_SUCCESS) {
    for (int it = 0; it < 200; it++) {
      const double lo0 = gsl_min_fminimizer_x_lower (s), hi0 = gsl_min_fminimizer_x_upper (s);
      if (gsl_min_fminimizer_iterate (s) != GSL_SUCCESS)
        break;
      x = gsl_min_fminimizer_x_minimum (s);
      /* GSL's Brent steps are at least sqrt(DBL_EPSILON) |x| long, so an absolute 1e-9 alone
         is out of reach once |log phi| passes about 0.07: the relative part (1e-7) ends the
         search there, and so does an iteration that leaves the bracket as it was (each
         evaluation is a pass of series densities over every row: measured, 200 of them
         made a Tweedie fit of 2e5 rows take minutes) */
      if (gsl_min_test_interval (gsl_min_fminimizer_x_lower (s), gsl_min_fminimizer_x_upper (s),
                                 1e-9, 1e-7) == GSL_SUCCESS
          || (gsl_min_fminimizer_x_lower (s) == lo0 && gsl_min_fminimizer_x_upper (s) == hi0))
        break;
    }
    fx = tw_negll_logphi (x, c);
  }
  gsl_min_fminimizer_free (s);
  *ll = -fx;
  return exp (x);
}

/* The fit at power P with phi at its MLE (light: no null model), and its log-likelihood. */
static bl_fit *
tw_fit_at (tw_ctx *c, double p, int light, double *ll)
{
  bl_fit *f;
  bl_err e;
  c->o.fam_par = p;
  f = bl_fit_core (c->d, NULL, NULL, &c->o, light, &e);
  *ll = -HUGE_VAL;
  if (!f) {
    if (c->status == BL_OK) {
      c->status = e.code;
      if (c->err)
        *c->err = e;
    }
    return NULL;
  }
  if (!f->st.converged)
    return f;
  c->y = f->y;
  c->mu = f->mu;
  c->a = f->a;
  c->n = f->n;
  c->p = p;
  f->st.phi_ml = tw_phi_ml (c, f->st.phi_pearson > 0.0 ? f->st.phi_pearson : 1.0, ll);
  return f;
}

static double
tw_profile (double p, void *arg)
{
  tw_ctx *c = arg;
  double ll;
  bl_fit *f;
  int ok;
  /* cancelled: no more profile fits; bl_fit_tweedie_run fails with BL_ECANCEL */
  if (c->o.irls.cancel && *c->o.irls.cancel) {
    if (c->status == BL_OK)
      c->status = bl_fail (c->err, BL_ECANCEL, "tweedie", "the fit was cancelled");
    return -HUGE_VAL;
  }
  f = tw_fit_at (c, p, 1, &ll);
  ok = f && f->st.converged;
  bl_fit_free (f);
  return ok ? ll : -HUGE_VAL;
}

static double tw_neg_profile (double p, void *arg) { return -tw_profile (p, arg); }
static double
tw_gap (double p, void *arg)
{
  tw_ctx *c = arg;
  return tw_profile (p, arg) - c->thr;
}

static double
tw_root (tw_ctx *c, double a, double b)
{
  gsl_function F = { tw_gap, c };
  gsl_root_fsolver *s = gsl_root_fsolver_alloc (gsl_root_fsolver_brent);
  double r = NAN;
  if (!s)
    return NAN;
  if (gsl_root_fsolver_set (s, &F, a < b ? a : b, a < b ? b : a) == GSL_SUCCESS)
    for (int it = 0; it < 100; it++) {
      if (gsl_root_fsolver_iterate (s) != GSL_SUCCESS)
        break;
      r = gsl_root_fsolver_root (s);
      if (gsl_root_test_interval (gsl_root_fsolver_x_lower (s), gsl_root_fsolver_x_upper (s),
                                  1e-6, 0.0) == GSL_SUCCESS)
        break;
    }
  gsl_root_fsolver_free (s);
  return r;
}

bl_fit *
bl_fit_tweedie_run (const bl_design *d, const bl_fit_opts *opt, bl_err *err)
{
  tw_ctx c;
  bl_fit *f;
  double p, ll, lo = NAN, hi = NAN;
  memset (&c, 0, sizeof c);
  c.d = d;
  c.o = *opt;
  c.o.fam = &bl_family_tweedie;
  if (!c.o.link)
    c.o.link = &bl_link_log;
  c.status = BL_OK;
  c.err = err;
  if (opt->transform != BL_TRANSFORM_NONE || opt->method == BL_METHOD_WLS) {
    bl_fail (err, BL_ESPEC, "--family", "tweedie is a GLM: --transform and --method wls do not "
             "apply");
    return NULL;
  }
  if (!opt->fam_par_est) {
    if (!(opt->fam_par > 1.0 && opt->fam_par < 2.0)) {
      bl_fail (err, BL_ESPEC, "--power", "the Tweedie power must lie strictly between 1 and 2, "
               "not %g", opt->fam_par);
      return NULL;
    }
    p = opt->fam_par;
  } else {
    const size_t ng = (size_t) lround ((TW_GRID_HI - TW_GRID_LO) / TW_GRID_STEP) + 1;
    double grid[32], val[32];
    size_t m = 0;
    for (size_t k = 0; k < ng && k < 32; k++) {
      grid[k] = TW_GRID_LO + TW_GRID_STEP * (double) k;
      val[k] = tw_profile (grid[k], &c);
      if (c.status != BL_OK)
        return NULL;
      if (val[k] > val[m])
        m = k;
    }
    if (!(val[m] > -HUGE_VAL)) {
      bl_fail (err, BL_ENOCONV, "--power", "the Tweedie profile likelihood could not be "
               "evaluated at any power in [%g, %g]", TW_GRID_LO, TW_GRID_HI);
      return NULL;
    }
    p = grid[m];
    if (m > 0 && m + 1 < ng && val[m] > val[m - 1] && val[m] > val[m + 1]) {
      gsl_function F = { tw_neg_profile, &c };
      gsl_min_fminimizer *s = gsl_min_fminimizer_alloc (gsl_min_fminimizer_brent);
      if (s && gsl_min_fminimizer_set_with_values (s, &F, grid[m], -val[m], grid[m - 1],
                                                   -val[m - 1], grid[m + 1], -val[m + 1])
                 == GSL_SUCCESS)
        for (int it = 0; it < 100; it++) {
          if (gsl_min_fminimizer_iterate (s) != GSL_SUCCESS)
            break;
          p = gsl_min_fminimizer_x_minimum (s);
          if (gsl_min_test_interval (gsl_min_fminimizer_x_lower (s),
                                     gsl_min_fminimizer_x_upper (s), 1e-6, 0.0) == GSL_SUCCESS)
            break;
        }
      if (s)
        gsl_min_fminimizer_free (s);
    }
    {
      const double top = tw_profile (p, &c);
      c.thr = top - 0.5 * gsl_cdf_chisq_Pinv (0.95, 1.0);
      for (size_t k = m + 1; k-- > 0;)
        if (grid[k] < p && val[k] < c.thr) {
          lo = tw_root (&c, grid[k], (k + 1 < ng && grid[k + 1] < p) ? grid[k + 1] : p);
          break;
        }
      for (size_t k = m; k < ng; k++)
        if (grid[k] > p && val[k] < c.thr) {
          hi = tw_root (&c, (k >= 1 && grid[k - 1] > p) ? grid[k - 1] : p, grid[k]);
          break;
        }
    }
    if (c.status != BL_OK)
      return NULL;
  }
  f = tw_fit_at (&c, p, 0, &ll);
  if (f && c.o.irls.cancel && *c.o.irls.cancel) {
    /* cancelled during the final fit or its phi: not a result (its phi search was cut) */
    bl_fit_free (f);
    bl_fail (err, BL_ECANCEL, "tweedie", "the fit was cancelled");
    return NULL;
  }
  if (!f || !f->st.converged)
    return f;
  f->st.fam_par = p;
  f->st.fam_par_lo = lo;
  f->st.fam_par_hi = hi;
  f->st.fam_par_est = opt->fam_par_est;
  f->st.phi_ml_why = "";
  bl_fit_set_loglik (f, ll, f->st.rank + 1 + (opt->fam_par_est ? 1u : 0u));
  return f;
}
