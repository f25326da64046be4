/* family_gaussian.c -- the gaussian family: V = 1, the normal density and CDF.

   McCullagh & Nelder (1989), Generalized Linear Models, 2nd ed., Chapman & Hall, table 2.1. */
#include <math.h>
#include <gsl/gsl_cdf.h>
#include "family.h"
#include "family_impl.h"
#include "family_tails.h"

/* V = 1, d = (y - mu)^2,
   log f = -1/2 log(2 pi phi / a) - a (y - mu)^2 / (2 phi) */
static double gau_var (double mu, double par) { (void) mu; (void) par; return 1.0; }
static double
gau_dev (double y, double mu, double par)
{
  (void) par;
  return (y - mu) * (y - mu);
}
static double
gau_logpdf (double y, double mu, double a, double phi, double par)
{
  (void) par;
  return -0.5 * (BL_LOG_2PI + log (phi / a)) - a * (y - mu) * (y - mu) / (2.0 * phi);
}
static double gau_start (double y, double ybar) { (void) ybar; return y; }

/* F(y) = Phi((y - mu) / sigma), sigma = sqrt(phi / a) (GSL's gaussian CDF) */
static double
gau_cdf (double y, double mu, double a, double phi, double par, int form)
{
  (void) par; (void) form;
  return gsl_cdf_gaussian_P (y - mu, sqrt (phi / a));
}
/* log Phi(z) and log Q(z), z = (y - mu) / sigma, each from its own tail (family_tails.c) */
static double
gau_logcdf (double y, double mu, double a, double phi, double par, int form)
{
  (void) par; (void) form;
  return bl_tail_norm_logP ((y - mu) / sqrt (phi / a));
}
static double
gau_logsf (double y, double mu, double a, double phi, double par, int form)
{
  (void) par; (void) form;
  return bl_tail_norm_logQ ((y - mu) / sqrt (phi / a));
}
static double
gau_quantile_upper (double q, double mu, double a, double phi, double par)
{
  (void) par;
  return mu + gsl_cdf_gaussian_Qinv (q, sqrt (phi / a));
}
static double
gau_quantile (double prob, double mu, double a, double phi, double par)
{
  (void) par;
  return mu + gsl_cdf_gaussian_Pinv (prob, sqrt (phi / a));
}

const bl_family bl_family_gaussian = {
  .name = "gaussian", .noun = "gaussian", .support = "any real y", .outside = NULL,
  .par_name = NULL, .default_link = &bl_link_identity,
  .flags = BL_FAM_PHI_FREE | BL_FAM_NORMAL, .par_kind = BL_FAMPAR_NONE,
  .phi_free = 1, .discrete = 0,
  .var_power = 0.0,
  .y_ok = bl_family_y_real, .valid_mu = bl_family_mu_real, .mustart = gau_start,
  .var = gau_var, .unit_dev = gau_dev, .logpdf = gau_logpdf, .cdf = gau_cdf,
  .logcdf = gau_logcdf, .logsf = gau_logsf, .quantile_upper = gau_quantile_upper,
  .quantile = gau_quantile, .phi_ml = bl_family_phi_dev_n, .loglik_unit = NULL
};
