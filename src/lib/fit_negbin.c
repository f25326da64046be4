/* fit_negbin.c -- the negative binomial engine: theta estimated by maximum likelihood around
   IRLS for the coefficients.

   Negative binomial (NB2): for fixed theta the model is a GLM with V = mu + mu^2 / theta, so
   IRLS gives beta; theta given the means maximizes
     l(theta) = sum a [lgamma(y + theta) - lgamma(theta) + theta log theta
                       - (y + theta) log(theta + mu)] + const,
   score  s = sum a [psi(y + theta) - psi(theta) + log theta + 1 - log(theta + mu)
                     - (y + theta) / (theta + mu)],
   and the two steps alternate until theta settles (Lawless 1987, Canad. J. Statist. 15,
   209-225; the alternation as in Venables & Ripley 2002, Modern Applied Statistics with S,
   4th ed., section 7.4, from memory).  theta and beta are orthogonal in the expected
   information, so se(theta) = 1 / sqrt(-l''(theta)).  k = rank + 1. */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <gsl/gsl_sf_psi.h>
#include "alloc.h"
#include "fit_engine.h"
#include "fit_glm.h"

#define NB_THETA_MAX 1e8          /* theta above this: the data are not overdispersed */
#define NB_THETA_MIN 1e-8
#define NB_MAX_OUTER 100


/* h(x) = psi(x) - log x.  For large x by its asymptotic series
     h(x) = -1/(2x) - 1/(12x^2) + 1/(120x^4) - 1/(252x^6) + 1/(240x^8) - ...
   (Abramowitz & Stegun 1964, 6.3.18), whose next term is below 1e-22 at x >= 100; below
   that, from GSL's psi (h is then at least 5e-3 in size, so the subtraction loses little). */
static double
psi_minus_log (double x)
{
  if (x >= 100.0) {
    const double r = 1.0 / x, r2 = r * r;
    return -0.5 * r - r2 * (1.0 / 12.0 - r2 * (1.0 / 120.0 - r2 * (1.0 / 252.0
                                                                 - r2 / 240.0)));
  }
  return gsl_sf_psi (x) - log (x);
}

/* The score is summed as
     psi(y + theta) - psi(theta) + log theta + 1 - log(theta + mu) - (y + theta)/(theta + mu)
       = h(y + theta) - h(theta) + log1p(u) - u,   u = (y - mu) / (theta + mu),
   an identity (log(y + theta) - log theta cancels against log((y + theta)/(theta + mu)) +
   log(theta + mu) - log theta).  At large theta each row's score is O(1/theta^2) while the
   left form subtracts numbers of size log theta: at theta = 1e8 its rounding error is ten
   times the score, and the sign test for theta -> infinity became noise (common practice,
   no source). */
static void
nb_score (const double *y, const double *mu, const double *a, size_t n, double th,
          double *s, double *h)
{
  long double ss = 0.0L, hh = 0.0L;
  const double hth = psi_minus_log (th), psi1th = gsl_sf_psi_1 (th);
  for (size_t i = 0; i < n; i++) {
    const double ai = a ? a[i] : 1.0, tm = th + mu[i], u = (y[i] - mu[i]) / tm;
    ss += ai * (psi_minus_log (y[i] + th) - hth + (log1p (u) - u));
    hh += ai * (gsl_sf_psi_1 (y[i] + th) - psi1th + 1.0 / th - 2.0 / tm
                + (y[i] + th) / (tm * tm));
  }
  *s = (double) ss;
  *h = (double) hh;
}

/* theta-hat given the means: safeguarded Newton on t = log theta inside a bracket.  Returns
   0, or 1 when the score stays positive up to NB_THETA_MAX (theta runs to infinity). */
static int
nb_theta_ml (const double *y, const double *mu, const double *a, size_t n, double th0,
             double *out)
{
  double lo = log (NB_THETA_MIN), hi = log (NB_THETA_MAX), t, s, h;
  nb_score (y, mu, a, n, NB_THETA_MAX, &s, &h);
  if (s > 0.0) {
    *out = HUGE_VAL;
    return 1;
  }
  t = (th0 > NB_THETA_MIN && th0 < NB_THETA_MAX) ? log (th0) : 0.0;
  for (int it = 0; it < 200; it++) {
    const double th = exp (t);
    double tn;
    nb_score (y, mu, a, n, th, &s, &h);
    if (s > 0.0)
      lo = t;
    else
      hi = t;
    /* d s / d t = theta s'(theta) */
    tn = (th * h != 0.0) ? t - s / (th * h) : 0.5 * (lo + hi);
    if (!(tn > lo && tn < hi))
      tn = 0.5 * (lo + hi);
    if (fabs (tn - t) < 1e-12 * (1.0 + fabs (t)) || hi - lo < 1e-13) {
      *out = exp (tn);
      return 0;
    }
    t = tn;
  }
  *out = exp (t);
  return 0;
}

bl_fit *
bl_fit_negbin_run (const bl_design *d, const bl_fit_opts *opt, bl_err *err)
{
  bl_fit_opts o = *opt;
  bl_fit *f = NULL;
  double th, s, h;
  int infinite = 0;
  size_t outer = 0;
  o.fam = &bl_family_negbin;
  if (!o.link)
    o.link = &bl_link_log;
  if (opt->transform != BL_TRANSFORM_NONE || opt->method == BL_METHOD_WLS) {
    bl_fail (err, BL_ESPEC, "--family", "negative-binomial is a GLM: --transform and --method "
             "wls do not apply");
    return NULL;
  }
  if (!opt->fam_par_est) {
    if (!(opt->fam_par > 0.0) || !isfinite (opt->fam_par)) {
      bl_fail (err, BL_ESPEC, "--theta", "theta must be a positive number, not %g",
               opt->fam_par);
      return NULL;
    }
    o.fam_par = opt->fam_par;
    f = bl_fit_core (d, NULL, NULL, &o, 0, err);
    if (f && f->st.converged) {
      nb_score (f->y, f->mu, f->a, f->n, o.fam_par, &s, &h);
      f->st.fam_par = o.fam_par;
      f->st.fam_par_est = 0;
    }
    return f;
  }
  /* start: the poisson fit and the moment estimate theta = sum mu^2 / sum((y - mu)^2 - mu);
     the support is checked for the family asked for first, so that its message names it */
  if (bl_fit_check_support (d, NULL, &bl_family_negbin, err) != BL_OK)
    return NULL;
  o.fam = &bl_family_poisson;
  f = bl_fit_core (d, NULL, NULL, &o, 1, err);
  if (!f)
    return NULL;
  if (!f->st.converged)
    return f;
  {
    long double num = 0.0L, den = 0.0L;
    for (size_t i = 0; i < f->n; i++) {
      const double r = f->y[i] - f->mu[i];
      num += f->mu[i] * f->mu[i];
      den += r * r - f->mu[i];
    }
    th = den > 0.0L ? (double) (num / den) : 1e3;
  }
  o.fam = &bl_family_negbin;
  for (outer = 0; outer < NB_MAX_OUTER; outer++) {
    double thn;
    infinite = nb_theta_ml (f->y, f->mu, f->a, f->n, th, &thn);
    if (infinite)
      thn = NB_THETA_MAX;
    bl_fit_free (f);
    o.fam_par = thn;
    f = bl_fit_core (d, NULL, NULL, &o, 1, err);
    if (!f)
      return NULL;
    if (!f->st.converged)
      return f;
    if (fabs (log (thn) - log (th)) < 1e-9 || infinite) {
      th = thn;
      break;
    }
    th = thn;
  }
  if (outer == NB_MAX_OUTER) {
    bl_fit_free (f);
    bl_fail (err, BL_ENOCONV, "negative-binomial", "theta did not settle in %d alternations "
             "of IRLS and its likelihood step", NB_MAX_OUTER);
    return NULL;
  }
  bl_fit_free (f);
  o.fam_par = th;
  f = bl_fit_core (d, NULL, NULL, &o, 0, err);        /* the final fit, with its null model */
  if (!f || !f->st.converged)
    return f;
  f->st.fam_par_est = 1;
  if (infinite) {
    f->st.fam_par = NAN;
    f->st.fam_par_why = "theta runs to infinity: the counts are not overdispersed, and the "
                        "poisson family suffices";
    if (bl_warnings_add (&f->warn, "%s (fitted with theta = %g)", f->st.fam_par_why,
                         NB_THETA_MAX) != BL_OK) {
      bl_fit_free (f);
      bl_fail (err, BL_ENOMEM, "negative-binomial", "out of memory");
      return NULL;
    }
  } else {
    nb_score (f->y, f->mu, f->a, f->n, th, &s, &h);
    f->st.fam_par = th;
    f->st.fam_par_se = h < 0.0 ? 1.0 / sqrt (-h) : NAN;
  }
  bl_fit_set_loglik (f, f->st.loglik, f->st.rank + 1);
  return f;
}
