/* family_tweedie.c -- the Tweedie family, 1 < p < 2: V = mu^p, the compound Poisson-gamma
   density by the series of Dunn & Smyth (2005), its CDF and quantile (tweedie.h), and the
   family's descriptor.  The power p is the shape parameter (par), estimated by the family's
   engine (famfit.c). */
#define _GNU_SOURCE 1            /* lgamma_r: the C library's log-gamma without the global
                                    signgam, so the series is safe on several threads */
#include <math.h>
#include <gsl/gsl_sf_gamma.h>
#include "family.h"
#include "family_impl.h"
#include "family_tails.h"
#include "tweedie.h"

static double
lgam (double x)
{
  int sign;
  return lgamma_r (x, &sign);
}

/*
 * For y > 0 (Dunn & Smyth 2005, eqs. 4-5):
 *   f(y) = (1/y) W(y) exp[ (1/phi) (y mu^(1-p) / (1-p) - mu^(2-p) / (2-p)) ],
 *   W = sum_{j>=1} W_j,  log W_j = j z - lgamma(j + 1) - lgamma(-j alpha),
 *   alpha = (2-p)/(1-p) < 0,  z = -alpha log y + alpha log(p-1) - (1-alpha) log phi
 *                                - log(2-p),
 * the largest term near j_max = y^(2-p) / (phi (2-p)).  The sum is accumulated relative to
 * the largest term, so nothing overflows at large y or small phi.
 *
 * Wide peaks (small phi): log W_j is smooth and concave in j with curvature near
 * -(1 - alpha) / j_max, so the terms form a bell of width sigma = sqrt(j_max / (1 - alpha)).
 * When m = floor(sigma / TW_STRIDE_PER_SIGMA) >= 2 and j_max >= TW_STRIDE_GAP sigma, the sum
 * is taken over every m-th term, times m: by the Poisson summation formula the sum over the
 * integers and the m-spaced sum both equal the integral of the bell up to aliasing terms of
 * relative size about 2 exp(-2 pi^2 (sigma / m)^2) < 1e-130 (sigma / m >= 4), and the terms
 * below j = 1 that the sum leaves out lie 16 sigma or more from the peak: below 1e-55 of it
 * (common practice, no source; measured against the term-by-term sum, stride 0, over
 * 3040 points: 1.4e-15 relative at worst; no Check test of it yet).
 * The cost per row then stays near 40 terms however small phi is, which the dispersion's
 * scan over 10^-4 .. 10^4 times its Pearson value needs (fit_tweedie.c).
 */
#define TW_STRIDE_PER_SIGMA 4.0
#define TW_STRIDE_GAP 16.0

double
bl_tweedie_log_w (double y, double phi, double p, int stride)
{
  const double alpha = (2.0 - p) / (1.0 - p);
  const double z = -alpha * log (y) + alpha * log (p - 1.0) - (1.0 - alpha) * log (phi)
                   - log (2.0 - p);
  double jmax = exp ((2.0 - p) * log (y)) / (phi * (2.0 - p));
  double lmax, s = 0.0, sigma;
  long j0, m = 1;
  if (!(jmax >= 1.0))
    jmax = 1.0;
  if (jmax > 1e15)
    jmax = 1e15;
  j0 = (long) floor (jmax + 0.5);
  if (j0 < 1)
    j0 = 1;
  sigma = sqrt ((double) j0 / (1.0 - alpha));
  if (stride && sigma >= 2.0 * TW_STRIDE_PER_SIGMA && (double) j0 >= TW_STRIDE_GAP * sigma)
    m = (long) floor (sigma / TW_STRIDE_PER_SIGMA);
#define LOGWJ(j) ((double) (j) * z - lgam ((double) (j) + 1.0) - lgam (-(double) (j) * alpha))
  lmax = LOGWJ (j0);
  /* upward from j0, then downward to 1, every m-th term */
  for (long j = j0, k = 0; k < BL_TWEEDIE_TERMS_MAX; j += m, k++) {
    const double t = exp (LOGWJ (j) - lmax);
    s += t;
    if (t < 1e-17 * s && j > j0)
      break;
  }
  for (long j = j0 - m, k = 0; j >= 1 && k < BL_TWEEDIE_TERMS_MAX; j -= m, k++) {
    const double t = exp (LOGWJ (j) - lmax);
    s += t;
    if (t < 1e-17 * s)
      break;
  }
#undef LOGWJ
  return lmax + log (s * (double) m);
}

double
bl_tweedie_logpdf (double y, double mu, double phi, double p)
{
  if (!(mu > 0.0) || !(phi > 0.0) || !(p > 1.0 && p < 2.0) || !(y >= 0.0) || !isfinite (y))
    return -HUGE_VAL;
  if (y == 0.0)
    return -exp ((2.0 - p) * log (mu)) / (phi * (2.0 - p));
  return -log (y) + bl_tweedie_log_w (y, phi, p, 1)
         + (y * exp ((1.0 - p) * log (mu)) / (1.0 - p) - exp ((2.0 - p) * log (mu)) / (2.0 - p))
           / phi;
}

double
bl_tweedie_unit_dev (double y, double mu, double p)
{
  const double t1 = y > 0.0 ? exp ((2.0 - p) * log (y)) / ((1.0 - p) * (2.0 - p)) : 0.0;
  const double d = 2.0 * (t1 - y * exp ((1.0 - p) * log (mu)) / (1.0 - p)
                          + exp ((2.0 - p) * log (mu)) / (2.0 - p));
  return d > 0.0 ? d : 0.0;
}

double
bl_tweedie_cdf (double y, double mu, double phi, double p)
{
  const double lam = exp ((2.0 - p) * log (mu)) / (phi * (2.0 - p));
  const double alpha = (2.0 - p) / (p - 1.0), gam = phi * (p - 1.0) * exp ((p - 1.0) * log (mu));
  const double nmax = lam + 40.0 * sqrt (lam) + 60.0;
  long double s;
  if (!(y >= 0.0))
    return 0.0;
  s = expl (-(long double) lam);                       /* P(N = 0) */
  if (y == 0.0)
    return (double) s;
  for (double nn = 1.0; nn <= nmax; nn += 1.0) {
    const double lw = -lam + nn * log (lam) - lgam (nn + 1.0);
    if (lw < -745.0 && nn > lam)
      break;
    if (lw < -745.0)
      continue;
    s += expl ((long double) lw) * gsl_sf_gamma_inc_P (nn * alpha, y / gam);
  }
  return s > 1.0L ? 1.0 : (double) s;
}

/*
 * The two tails of the same compound sum in log space:
 *   log P(Y <= y) = log [ e^-lambda + sum_{n>=1} w_n P(n alpha, y / gamma) ],
 *   log P(Y > y)  = log sum_{n>=1} w_n Q(n alpha, y / gamma),     w_n = e^-lambda lambda^n / n!,
 * each term's log from the log incomplete gamma (family_tails.c), summed by log-add-exp
 * (every term is positive: no cancellation).  Terms are skipped while log w_n is more than
 * 40 below the running sum (the gamma factor is at most 1), and the sum stops past the
 * Poisson mode once they stay so (w_n then falls faster than geometrically), so the far
 * upper tail, carried by many jumps, keeps summing as far as it must (Jorgensen 1997,
 * section 4.2, for the representation).  UPPER selects the tail.
 */
static double
tweedie_logtail (double y, double mu, double phi, double p, int upper)
{
  const double lam = exp ((2.0 - p) * log (mu)) / (phi * (2.0 - p));
  const double alpha = (2.0 - p) / (p - 1.0), gam = phi * (p - 1.0) * exp ((p - 1.0) * log (mu));
  const double loglam = log (lam), x = y / gam;
  double acc = upper ? -HUGE_VAL : -lam;
  for (double nn = 1.0; nn <= (double) BL_TWEEDIE_TERMS_MAX + lam; nn += 1.0) {
    const double lw = -lam + nn * loglam - lgam (nn + 1.0);
    if (lw < acc - 40.0) {
      if (nn > lam)
        break;
      continue;
    }
    acc = bl_tail_logaddexp (acc, lw + (upper ? bl_tail_gamma_logQ (nn * alpha, x)
                                              : bl_tail_gamma_logP (nn * alpha, x)));
  }
  return acc;
}

double
bl_tweedie_logcdf (double y, double mu, double phi, double p)
{
  if (!(y >= 0.0))
    return -HUGE_VAL;
  if (y == 0.0)
    return -exp ((2.0 - p) * log (mu)) / (phi * (2.0 - p));
  return tweedie_logtail (y, mu, phi, p, 0);
}

double
bl_tweedie_logsf (double y, double mu, double phi, double p)
{
  if (!(y >= 0.0))
    return 0.0;
  if (y == 0.0)
    return bl_tail_log1mexp (-exp ((2.0 - p) * log (mu)) / (phi * (2.0 - p)));
  return tweedie_logtail (y, mu, phi, p, 1);
}

double
bl_tweedie_quantile (double prob, double mu, double phi, double p)
{
  double lo = 0.0, hi = mu > 0.0 ? mu : 1.0;
  if (prob <= bl_tweedie_cdf (0.0, mu, phi, p))
    return 0.0;
  for (int k = 0; k < 200 && bl_tweedie_cdf (hi, mu, phi, p) < prob; k++) {
    lo = hi;
    hi *= 2.0;
  }
  for (int k = 0; k < 200 && hi - lo > 1e-12 * hi; k++) {
    const double mid = 0.5 * (lo + hi);
    if (bl_tweedie_cdf (mid, mu, phi, p) < prob)
      lo = mid;
    else
      hi = mid;
  }
  return 0.5 * (lo + hi);
}

/* ---- the descriptor: V = mu^p, the unit deviance, density, CDF and quantile above; the
   row's dispersion is phi / a. */
static double tw_var (double mu, double p) { return exp (p * log (mu)); }
static double tw_dev (double y, double mu, double p) { return bl_tweedie_unit_dev (y, mu, p); }
static double
tw_logpdf (double y, double mu, double a, double phi, double p)
{
  return bl_tweedie_logpdf (y, mu, phi / a, p);
}
static double
tw_cdf (double y, double mu, double a, double phi, double p, int form)
{
  (void) form;
  return bl_tweedie_cdf (y, mu, phi / a, p);
}
static double
tw_logcdf (double y, double mu, double a, double phi, double p, int form)
{
  (void) form;
  return bl_tweedie_logcdf (y, mu, phi / a, p);
}
static double
tw_logsf (double y, double mu, double a, double phi, double p, int form)
{
  (void) form;
  return bl_tweedie_logsf (y, mu, phi / a, p);
}
static double
tw_quantile_upper (double q, double mu, double a, double phi, double p)
{
  return bl_family_sf_bisect (&bl_family_tweedie, q, mu, mu, a, phi, p);
}
static double
tw_quantile (double prob, double mu, double a, double phi, double p)
{
  return bl_tweedie_quantile (prob, mu, phi / a, p);
}
/* A start inside mu > 0 also where y = 0 (common practice, no source). */
static double tw_start (double y, double ybar) { return y + 0.1 * ybar; }

/* The dispersion MLE hook gives D / n, as it always has; the Tweedie engine (famfit.c)
   maximizes the series log-likelihood in phi itself. */
const bl_family bl_family_tweedie = {
  .name = "tweedie", .noun = "Tweedie", .support = "y >= 0", .outside = "y < 0",
  .par_name = "power", .default_link = &bl_link_log,
  .flags = BL_FAM_PHI_FREE | BL_FAM_ZERO_MASS | BL_FAM_CDF_PHI_ML,
  .par_kind = BL_FAMPAR_POWER, .phi_free = 1, .discrete = 0, .var_power = NAN,
  .y_ok = bl_family_y_nonneg, .valid_mu = bl_family_mu_pos, .mustart = tw_start,
  .var = tw_var, .unit_dev = tw_dev, .logpdf = tw_logpdf, .cdf = tw_cdf,
  .logcdf = tw_logcdf, .logsf = tw_logsf, .quantile_upper = tw_quantile_upper,
  .quantile = tw_quantile, .phi_ml = bl_family_phi_dev_n, .loglik_unit = NULL
};
