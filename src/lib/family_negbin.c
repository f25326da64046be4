/* family_negbin.c -- the negative binomial family (NB2): V = mu + mu^2 / theta, its
   probabilities, CDF and quantile.

   Lawless 1987, Canad. J. Statist. 15, 209-225; Hilbe 2011, Negative Binomial Regression,
   2nd ed., Cambridge University Press, ch. 8.  Theta is the shape parameter (par), estimated
   by the family's engine (famfit.c). */
#include <limits.h>
#include <math.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_sf_gamma.h>
#include "family.h"
#include "family_impl.h"
#include "family_tails.h"

/* V = mu + mu^2 / theta,
   d = 2 [y log(y/mu) - (y + theta) log((y + theta) / (mu + theta))],
   log P = a [lgamma(y + theta) - lgamma(theta) - lgamma(y + 1) + theta log(theta / (theta +
   mu)) + y log(mu / (theta + mu))] */
static double nb_var (double mu, double th) { return mu + mu * mu / th; }
static double
nb_dev (double y, double mu, double th)
{
  return bl_family_clamp_dev (2.0 * (bl_family_ylogy (y, mu)
                                     - (y + th) * log ((y + th) / (mu + th))));
}
/* For integer y (below a bound),
     lgamma(y + theta) - lgamma(theta) + y log(mu / (theta + mu))
       = sum_{k<y} log1p((k - mu) / (theta + mu)) + y log mu,
   and theta log(theta / (theta + mu)) = -theta log1p(mu / theta): the same log probability
   without subtracting numbers of size log theta, which loses about 1e-7 a row near the
   poisson limit (common practice, no source). */
static double
nb_logpdf (double y, double mu, double a, double phi, double th)
{
  (void) phi;
  if (y == floor (y) && y >= 0.0 && y < 1e4) {
    long double s = 0.0L;
    for (double k = 0.0; k < y; k += 1.0)
      s += log1p ((k - mu) / (th + mu));
    return a * ((double) s + (y > 0.0 ? y * log (mu) : 0.0) - gsl_sf_lngamma (y + 1.0)
                - th * log1p (mu / th));
  }
  return a * (gsl_sf_lngamma (y + th) - gsl_sf_lngamma (th) - gsl_sf_lngamma (y + 1.0)
              - th * log1p (mu / th) + (y > 0.0 ? y * log (mu / (th + mu)) : 0.0));
}
/* Start from y + 0.1 (mean space needs mu > 0; common practice, no source). */
static double nb_start (double y, double ybar) { (void) ybar; return y + 0.1; }

/* P(Y <= y) of NB(theta, theta / (theta + mu)) at the integer y >= 0 (GSL's negative
   binomial CDF, which counts failures before the theta-th success) */
static double
nb_cdf (double y, double mu, double a, double phi, double th, int form)
{
  (void) a; (void) phi; (void) form;
  return y >= 0.0 ? gsl_cdf_negative_binomial_P ((unsigned) y, th / (th + mu), th) : 0.0;
}

/* log P(Y <= k) = log I_p(theta, k + 1) and log P(Y > k) = log I_{1-p}(k + 1, theta),
   p = theta / (theta + mu), 1 - p = mu / (theta + mu), k = floor(y) (Abramowitz & Stegun
   26.5.24), the incomplete beta in log space */
static double
nb_logcdf (double y, double mu, double a, double phi, double th, int form)
{
  (void) a; (void) phi; (void) form;
  if (!(y >= 0.0))
    return -HUGE_VAL;
  return bl_tail_beta_logI (th, floor (y) + 1.0, th / (th + mu), mu / (th + mu));
}
static double
nb_logsf (double y, double mu, double a, double phi, double th, int form)
{
  (void) a; (void) phi; (void) form;
  if (!(y >= 0.0))
    return 0.0;
  return bl_tail_beta_logI (floor (y) + 1.0, th, mu / (th + mu), th / (th + mu));
}
static double
nb_quantile_upper (double q, double mu, double a, double phi, double th)
{
  const double k = floor (mu + gsl_cdf_ugaussian_Qinv (q) * sqrt (mu + mu * mu / th));
  return bl_family_discrete_quantile_upper (&bl_family_negbin, q, k, mu, a, phi, th);
}

/* The least k with P(Y <= k) >= P, from the normal approximation mu + z_p sqrt(V(mu))
   (common practice, no source). */
static double
nb_quantile (double prob, double mu, double a, double phi, double th)
{
  double k;
  if (!(prob < 1.0))
    return HUGE_VAL;
  k = floor (mu + gsl_cdf_ugaussian_Pinv (prob) * sqrt (mu + mu * mu / th));
  if (!(k < (double) UINT_MAX / 2.0))
    return k;
  return bl_family_discrete_quantile (&bl_family_negbin, prob, k, mu, a, phi, th);
}

const bl_family bl_family_negbin = {
  .name = "negative-binomial", .noun = "the negative binomial", .support = "y >= 0",
  .outside = "y < 0", .par_name = "theta", .default_link = &bl_link_log,
  .flags = BL_FAM_DISCRETE, .par_kind = BL_FAMPAR_THETA,
  .phi_free = 0, .discrete = 1, .var_power = NAN,
  .y_ok = bl_family_y_nonneg, .valid_mu = bl_family_mu_pos, .mustart = nb_start,
  .var = nb_var, .unit_dev = nb_dev, .logpdf = nb_logpdf, .cdf = nb_cdf,
  .logcdf = nb_logcdf, .logsf = nb_logsf, .quantile_upper = nb_quantile_upper,
  .quantile = nb_quantile, .phi_ml = NULL, .loglik_unit = NULL
};
