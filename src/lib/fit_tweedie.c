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

/* The search range of the power and its scan: [1.01, 1.99] at 10 points a unit (11 points,
   a step of 0.098; issue 13), then Brent's method inside the best point's neighbours. */
#define TW_POWER_LO 1.01
#define TW_POWER_HI 1.99
#define TW_POWER_PER_UNIT 10.0


typedef struct tw_ctx {
  const bl_design *d;
  bl_fit_opts o;
  const double *y, *mu, *a;
  size_t n;
  double p;
  int phi_edge;                   /* the last phi search: -1/+1 its maximum at an end */
  double phi_mid;                 /* its centre (the Pearson value) */
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
   (each evaluation is a pass of series densities over every row). */
static const bl_profile_tol tw_phi_tol = { 1e-9, 1e-7, 200, 1 };
/* The range of phi: 10^-TW_PHI_DECADES .. 10^TW_PHI_DECADES times the Pearson estimate,
   scanned at TW_PHI_PER_DECADE points a decade (issue 13: the log-likelihood in phi can have
   several maxima when p is near 1, where the density has a lump at each count of jumps), then
   Brent's method inside the best point's neighbours (bl_profile_search). */
#define TW_PHI_DECADES 4.0
#define TW_PHI_PER_DECADE 8.0
#define TW_PHI_GRID_MAX 80        /* 2 x 4 decades x 8 + 1 = 65 points */
#define LN10 2.302585092994045684

/* phi-hat given the means: the global maximum over the range above.  *LL is the
   log-likelihood there, *EDGE -1 or +1 when the maximum is at an end of the range. */
static double
tw_phi_ml (tw_ctx *c, double phi0, double *ll, int *edge)
{
  const double lo = log (phi0) - TW_PHI_DECADES * LN10, hi = log (phi0) + TW_PHI_DECADES * LN10;
  size_t ng = bl_profile_npoints (lo, hi, TW_PHI_PER_DECADE / LN10);
  double grid[TW_PHI_GRID_MAX], val[TW_PHI_GRID_MAX];
  bl_profile_max mx;
  if (ng > TW_PHI_GRID_MAX)
    ng = TW_PHI_GRID_MAX;
  if (bl_profile_search (tw_ll_logphi, c, lo, hi, ng, grid, val, NULL, &tw_phi_tol, &mx)
      != BL_OK)
    c->status = BL_ENOMEM;
  *ll = mx.fx;
  *edge = mx.edge;
  return exp (mx.x);
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
  c->phi_mid = f->st.phi_pearson > 0.0 && isfinite (f->st.phi_pearson) ? f->st.phi_pearson
               : 1.0;
  f->st.phi_ml = tw_phi_ml (c, c->phi_mid, ll, &c->phi_edge);
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
#define TW_GRID_MAX 64            /* grid points at most (11 are used) */

bl_fit *
bl_fit_tweedie_run (const bl_design *d, const bl_fit_opts *opt, bl_err *err)
{
  tw_ctx c;
  bl_fit *f;
  double p, ll, lo = NAN, hi = NAN;
  int p_edge = 0;
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
    size_t ng = bl_profile_npoints (TW_POWER_LO, TW_POWER_HI, TW_POWER_PER_UNIT);
    double grid[TW_GRID_MAX], val[TW_GRID_MAX];
    bl_profile_max mx;
    if (ng > TW_GRID_MAX)
      ng = TW_GRID_MAX;
    (void) bl_profile_search (tw_profile, &c, TW_POWER_LO, TW_POWER_HI, ng, grid, val,
                              &c.status, &tw_power_tol, &mx);
    if (c.status != BL_OK)
      return NULL;
    if (!(mx.fx > -HUGE_VAL)) {
      bl_fail (err, BL_ENOCONV, "--power", "the Tweedie profile likelihood could not be "
               "evaluated at any power in [%g, %g]", TW_POWER_LO, TW_POWER_HI);
      return NULL;
    }
    p = mx.x;
    p_edge = mx.edge;
    {
      size_t m = 0;
      for (size_t k = 1; k < ng; k++)
        if (val[k] > val[m])
          m = k;
      (void) bl_profile_interval (tw_profile, &c, grid, val, ng, m, p,
                                  bl_profile_threshold (mx.fx, BL_PROFILE_LEVEL),
                                  &tw_root_tol, &lo, &hi);
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
  /* a maximum on an end of its search range: said in the fit's warnings (and so in the
     JSON's status.warnings and a comparison's notes) */
  if ((p_edge
       && bl_warnings_add (&f->warn, "the power's profile maximum is at the %s end of its "
                           "search range [%g, %g]: p = %g is a bound, not an interior "
                           "estimate", p_edge < 0 ? "lower" : "upper", TW_POWER_LO,
                           TW_POWER_HI, p) != BL_OK)
      || (c.phi_edge
          && bl_warnings_add (&f->warn, "the dispersion's maximum is at the %s end of its "
                              "search range (10^-%g to 10^%g times the Pearson value %g): "
                              "phi = %g is a bound", c.phi_edge < 0 ? "lower" : "upper",
                              TW_PHI_DECADES, TW_PHI_DECADES, c.phi_mid, f->st.phi_ml)
             != BL_OK)) {
    bl_fit_free (f);
    bl_fail (err, BL_ENOMEM, "tweedie", "out of memory");
    return NULL;
  }
  return f;
}
