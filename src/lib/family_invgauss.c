/* family_invgauss.c -- the inverse gaussian family: V = mu^3, its density, CDF and quantile.

   McCullagh & Nelder (1989), Generalized Linear Models, 2nd ed., Chapman & Hall, table 2.1;
   the density and CDF from Chhikara & Folks (1989), The Inverse Gaussian Distribution,
   Marcel Dekker, eqs. 2.1 and 2.3 (2.12). */
#include <float.h>
#include <math.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_sf_erf.h>
#include "family.h"
#include "family_impl.h"
#include "family_tails.h"

#define IG_BISECT_MAX 400         /* bisection steps of the quantile */

/* V = mu^3, d = (y - mu)^2 / (mu^2 y),
   log f = -1/2 log(2 pi phi y^3 / a) - a (y - mu)^2 / (2 phi mu^2 y) */
static double ig_var (double mu, double par) { (void) par; return mu * mu * mu; }
static double
ig_dev (double y, double mu, double par)
{
  (void) par;
  return (y - mu) * (y - mu) / (mu * mu * y);
}
static double
ig_logpdf (double y, double mu, double a, double phi, double par)
{
  return -0.5 * (BL_LOG_2PI + log (phi * y * y * y / a)) - a * ig_dev (y, mu, par)
         / (2.0 * phi);
}
static double pos_start (double y, double ybar) { (void) ybar; return y; }

/*
 * Chhikara & Folks 1989, eq. 2.3: F(y) = Phi(z1) + exp(2 lambda / mu) Phi(-z2),
 *   z1 = s (y/mu - 1), z2 = s (y/mu + 1), s = sqrt(lambda / y), lambda = a / phi.
 * Since z2^2 - z1^2 = 4 lambda / mu, the second term is exactly phi(z1) M(z2), with
 * phi the standard normal density and M(z) = Q(z) / phi(z) Mills' ratio, so that no
 * exp(2 lambda / mu) is ever formed (it overflows for lambda / mu > 355, where the term it
 * multiplies underflows; the two were dropped together before, which lost up to 1% of the
 * CDF of a fit with a coefficient of variation below 0.05).  In log space:
 *   log F = log(Phi(z1) + exp(log phi(z1) + log M(z2))),
 *   log S = log(1 - F) = log phi(z1) + log(M(z1) - M(z2))   (F > 1/2; M decreases),
 *   log S = log(1 - F) from log F otherwise.
 * log M(z) = -log h(z), h GSL's hazard function (the inverse Mills ratio, accurate for
 * large z), for z > 0; log Q(z) + z^2/2 + log sqrt(2 pi) for z <= 0, where Q(z) >= 1/2.
 */
#define IG_LOG_SQRT_2PI 0.91893853320467274178032973640562
static double
log_mills (double z)
{
  if (z > 0.0)
    return -log (gsl_sf_hazard (z));
  return bl_tail_norm_logQ (z) + 0.5 * z * z + IG_LOG_SQRT_2PI;
}
static void
ig_z (double y, double mu, double a, double phi, double *z1, double *z2)
{
  const double s = sqrt (a / phi / y);
  *z1 = s * (y / mu - 1.0);
  *z2 = s * (y / mu + 1.0);
}
static double
ig_logcdf (double y, double mu, double a, double phi, double par, int form)
{
  double z1, z2;
  (void) par; (void) form;
  if (!(y > 0.0))
    return -HUGE_VAL;
  if (y == HUGE_VAL)
    return 0.0;
  ig_z (y, mu, a, phi, &z1, &z2);
  return bl_tail_logaddexp (bl_tail_norm_logP (z1),
                            -0.5 * z1 * z1 - IG_LOG_SQRT_2PI + log_mills (z2));
}
static double
ig_logsf (double y, double mu, double a, double phi, double par, int form)
{
  const double lf = ig_logcdf (y, mu, a, phi, par, form);
  double z1, z2;
  if (!(y > 0.0))
    return 0.0;
  if (y == HUGE_VAL)
    return -HUGE_VAL;
  if (lf < -M_LN2)
    return bl_tail_log1mexp (lf);
  ig_z (y, mu, a, phi, &z1, &z2);
  {
    const double m1 = exp (log_mills (z1)), m2 = exp (log_mills (z2));
    return m1 > m2 ? -0.5 * z1 * z1 - IG_LOG_SQRT_2PI + log (m1 - m2) : -HUGE_VAL;
  }
}
/* F itself, from the log form above (the comparer's and the quantile residuals' CDF). */
static double
ig_cdf (double y, double mu, double a, double phi, double par, int form)
{
  return exp (ig_logcdf (y, mu, a, phi, par, form));
}

/*
 * The same CDF of IG(mu, lambda) (Chhikara & Folks 1989, eq. 2.12; Johnson, Kotz &
 * Balakrishnan 1994, Continuous Univariate Distributions 1, ch. 15) with the second term as
 * exp(2 lambda/mu + log Phi(-z)), log Phi(-z) = log erfc(z/sqrt 2) - log 2, so that it
 * neither overflows nor underflows for large lambda/mu: the form the prediction quantiles
 * bisect on (kept apart from ig_cdf so that both keep their numbers bit for bit).
 */
static double
ig_cdf_erfc (double x, double mu, double lambda)
{
  const double r = sqrt (lambda / x);
  const double z1 = r * (x / mu - 1.0), z2 = r * (x / mu + 1.0);
  if (x <= 0.0)
    return 0.0;
  return gsl_cdf_ugaussian_P (z1)
         + exp (2.0 * lambda / mu + gsl_sf_log_erfc (z2 / M_SQRT2) - M_LN2);
}

/* The P quantile of IG(mu, lambda = a / phi) by bisection on its CDF (monotone), bracketed by
   doubling from mu (common practice, no source). */
static double
ig_quantile (double prob, double mu, double a, double phi, double par)
{
  const double lambda = a / phi;
  double lo = 0.0, hi = mu;
  (void) par;
  for (int k = 0; k < 2000 && ig_cdf_erfc (hi, mu, lambda) < prob; k++) {
    lo = hi;
    hi *= 2.0;
  }
  for (int k = 0; k < IG_BISECT_MAX && hi - lo > 4.0 * DBL_EPSILON * hi; k++) {
    const double mid = 0.5 * (lo + hi);
    if (ig_cdf_erfc (mid, mu, lambda) < prob)
      lo = mid;
    else
      hi = mid;
  }
  return 0.5 * (lo + hi);
}

static double
ig_quantile_upper (double q, double mu, double a, double phi, double par)
{
  return bl_family_sf_bisect (&bl_family_invgauss, q, mu, mu, a, phi, par);
}

/* The canonical link of the inverse gaussian is 1/mu^2, which is not in ballast's link set;
   its default here is log. */
const bl_family bl_family_invgauss = {
  .name = "inverse-gaussian", .noun = "the inverse gaussian", .support = "y > 0",
  .outside = "y <= 0", .par_name = NULL, .default_link = &bl_link_log,
  .flags = BL_FAM_PHI_FREE, .par_kind = BL_FAMPAR_NONE,
  .phi_free = 1, .discrete = 0, .var_power = 3.0,
  .y_ok = bl_family_y_pos, .valid_mu = bl_family_mu_pos, .mustart = pos_start,
  .var = ig_var, .unit_dev = ig_dev, .logpdf = ig_logpdf, .cdf = ig_cdf,
  .logcdf = ig_logcdf, .logsf = ig_logsf, .quantile_upper = ig_quantile_upper,
  .quantile = ig_quantile, .phi_ml = bl_family_phi_dev_n, .loglik_unit = NULL
};
