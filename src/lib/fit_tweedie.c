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
#include "alloc.h"
#include "fit_engine.h"
#include "fit_glm.h"
#include "profile.h"

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

static double
tw_ll_logphi (double t, void *arg)
{
  return -tw_negll_logphi (t, arg);
}

/* The search for log phi: GSL's Brent steps are at least sqrt(DBL_EPSILON) |x| long, so an
   absolute 1e-9 alone is out of reach once |log phi| passes about 0.07: the relative part
   (1e-7) ends the search there, and so does an iteration that leaves the bracket as it was
   (each evaluation is a pass of series densities over every row: measured, 200 of them made
   a Tweedie fit of 2e5 rows take minutes). */
static const bl_profile_tol tw_phi_tol = { 1e-9, 1e-7, 200, 1 };
#define TW_PHI_SPAN 7.0           /* the first bracket: log phi0 -/+ this */
#define TW_PHI_WALK 60            /* halvings of the bracket while looking for its inside */

/* phi-hat given the means: Brent's method on log phi, bracketed around the Pearson value. */
static double
tw_phi_ml (tw_ctx *c, double phi0, double *ll)
{
  double lo = log (phi0) - TW_PHI_SPAN, hi = log (phi0) + TW_PHI_SPAN, x = log (phi0);
  double fx = tw_negll_logphi (x, c), flo = tw_negll_logphi (lo, c);
  double fhi = tw_negll_logphi (hi, c);
  /* walk the start inward until it is below both ends (the likelihood is unimodal in
     log phi) */
  for (int k = 0; k < TW_PHI_WALK && !(fx < flo && fx < fhi); k++) {
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
  if (fx < flo && fx < fhi) {
    if (bl_profile_brent (tw_ll_logphi, c, lo, -flo, x, -fx, hi, -fhi, &tw_phi_tol, &x)
        != BL_OK) {
      c->status = BL_ENOMEM;
      return NAN;
    }
    fx = tw_negll_logphi (x, c);
  }
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

/* The searches of the power's profile: the maximum by Brent's method to 1e-6 in p, at most
   100 profile fits, stopping as the other searches do when an iteration leaves both ends of
   the bracket where they were (p no longer changes: the rest of the fits would be spent for
   nothing); the interval ends by Brent's root bracketing to 1e-6, at most 100 fits each.
   A solver that GSL cannot allocate is skipped: the grid point stands for the maximum, and
   that end of the interval is open. */
static const bl_profile_tol tw_power_tol = { 1e-6, 0.0, 100, 1 };
static const bl_profile_tol tw_root_tol = { 1e-6, 0.0, 100, 0 };
#define TW_GRID_MAX 32            /* grid points at most */

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
    const size_t ng0 = (size_t) lround ((TW_GRID_HI - TW_GRID_LO) / TW_GRID_STEP) + 1;
    const size_t ng = ng0 < TW_GRID_MAX ? ng0 : TW_GRID_MAX;
    double grid[TW_GRID_MAX], val[TW_GRID_MAX];
    size_t m = bl_profile_grid (tw_profile, &c, TW_GRID_LO, TW_GRID_STEP, ng, grid, val,
                                &c.status);
    if (c.status != BL_OK)
      return NULL;
    if (!(val[m] > -HUGE_VAL)) {
      bl_fail (err, BL_ENOCONV, "--power", "the Tweedie profile likelihood could not be "
               "evaluated at any power in [%g, %g]", TW_GRID_LO, TW_GRID_HI);
      return NULL;
    }
    (void) bl_profile_refine (tw_profile, &c, grid, val, ng, m, &tw_power_tol, &p);
    (void) bl_profile_interval (tw_profile, &c, grid, val, ng, m, p,
                                bl_profile_threshold (tw_profile (p, &c), BL_PROFILE_LEVEL),
                                &tw_root_tol, &lo, &hi);
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
