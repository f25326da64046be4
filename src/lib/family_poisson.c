/* family_poisson.c -- the poisson family: V = mu, the poisson probabilities and CDF.

   McCullagh & Nelder (1989), Generalized Linear Models, 2nd ed., Chapman & Hall, table 2.1
   and section 2.3. */
#include <limits.h>
#include <math.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_sf_gamma.h>
#include "family.h"
#include "family_impl.h"
#include "family_tails.h"

/* V = mu, d = 2 [y log(y/mu) - (y - mu)],
   log P = a [y log mu - mu - lgamma(y + 1)] (prior weights multiply the log-likelihood) */
static double poi_var (double mu, double par) { (void) par; return mu; }
static double
poi_dev (double y, double mu, double par)
{
  (void) par;
  return bl_family_clamp_dev (2.0 * (bl_family_ylogy (y, mu) - (y - mu)));
}
static double
poi_logpdf (double y, double mu, double a, double phi, double par)
{
  (void) phi; (void) par;
  return a * ((y > 0.0 ? y * log (mu) : 0.0) - mu - gsl_sf_lngamma (y + 1.0));
}
/* Start from y + 0.1 (mean space needs mu > 0; common practice, no source). */
static double poi_start (double y, double ybar) { (void) ybar; return y + 0.1; }

/* P(Y <= y) = sum_{k <= y} e^-mu mu^k / k! (GSL's poisson CDF) at the integer y >= 0 */
static double
poi_cdf (double y, double mu, double a, double phi, double par, int form)
{
  (void) a; (void) phi; (void) par; (void) form;
  return y >= 0.0 ? gsl_cdf_poisson_P ((unsigned) y, mu) : 0.0;
}

/* log P(Y <= k) = log Q(k + 1, mu) and log P(Y > k) = log P(k + 1, mu), k = floor(y), the
   regularized incomplete gamma functions (Abramowitz & Stegun 26.4.21) in log space */
static double
poi_logcdf (double y, double mu, double a, double phi, double par, int form)
{
  (void) a; (void) phi; (void) par; (void) form;
  return y >= 0.0 ? bl_tail_gamma_logQ (floor (y) + 1.0, mu) : -HUGE_VAL;
}
static double
poi_logsf (double y, double mu, double a, double phi, double par, int form)
{
  (void) a; (void) phi; (void) par; (void) form;
  return y >= 0.0 ? bl_tail_gamma_logP (floor (y) + 1.0, mu) : 0.0;
}
static double
poi_quantile_upper (double q, double mu, double a, double phi, double par)
{
  const double k = floor (mu + gsl_cdf_ugaussian_Qinv (q) * sqrt (mu));
  return bl_family_discrete_quantile_upper (&bl_family_poisson, q, k, mu, a, phi, par);
}

/* Smallest k with P(X <= k) >= P for X Poisson(MU), from the normal approximation
   mu + z_p sqrt(mu) (common practice, no source). */
static double
poi_quantile (double prob, double mu, double a, double phi, double par)
{
  double k;
  if (!(prob < 1.0))
    return HUGE_VAL;          /* the level rounds 1 - alpha/2 to 1: no finite quantile */
  k = floor (mu + gsl_cdf_ugaussian_Pinv (prob) * sqrt (mu));
  if (!(k < (double) UINT_MAX / 2.0))
    return k;
  return bl_family_discrete_quantile (&bl_family_poisson, prob, k, mu, a, phi, par);
}

const bl_family bl_family_poisson = {
  .name = "poisson", .noun = "poisson", .support = "y >= 0", .outside = "y < 0",
  .par_name = NULL, .default_link = &bl_link_log,
  .flags = BL_FAM_DISCRETE | BL_FAM_OVERDISP | BL_FAM_ZERO_GROUP, .par_kind = BL_FAMPAR_NONE,
  .phi_free = 0, .discrete = 1, .var_power = 1.0,
  .quantile_mu_max = (double) UINT_MAX / 4.0,     /* GSL's poisson CDF takes an unsigned k */
  .y_ok = bl_family_y_nonneg, .valid_mu = bl_family_mu_pos, .mustart = poi_start,
  .var = poi_var, .unit_dev = poi_dev, .logpdf = poi_logpdf, .cdf = poi_cdf,
  .logcdf = poi_logcdf, .logsf = poi_logsf, .quantile_upper = poi_quantile_upper,
  .quantile = poi_quantile, .phi_ml = NULL, .loglik_unit = NULL
};
