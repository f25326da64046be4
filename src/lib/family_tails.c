/* family_tails.c -- probabilities in log space, accurate in both tails (family_tails.h).

   A probability is computed where its mass is: the upper tail as an upper tail (never as
   1 - P), a difference of CDFs as the difference of the two tails on the side that holds
   the interval, in log space, and beyond the double range of GSL's _P and _Q functions by
   log-space forms (an asymptotic series for the normal, a continued fraction or a series
   with its prefactor in log space for the gamma and beta).  GSL's functions are used
   wherever their value is a normal double, so nothing changes for ordinary arguments. */
#include <float.h>
#include <math.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_erf.h>
#include <gsl/gsl_sf_gamma.h>
#include "family_tails.h"

#define LOG_SQRT_2PI 0.91893853320467274178032973640562   /* log sqrt(2 pi) */
#define TAIL_MIN 1e-280        /* below this a GSL tail value is replaced by the log form */
#define NORM_ASYMP_X 37.0      /* Q(37) = 5.7e-300: beyond it the asymptotic series */
#define CF_EPS 1e-16           /* relative step that ends a continued fraction or series */
#define CF_TINY 1e-300         /* Lentz's guard against a zero denominator */
#define CF_MAX 100000          /* terms at most (the tails converge in a few dozen) */

/* log(1 - e^x), x <= 0: log(-expm1(x)) for x > -log 2, else log1p(-exp(x)), each where it
   keeps its digits (Maechler 2012, "Accurately computing log(1 - exp(-|a|))", CRAN Rmpfr
   vignette, eq. 7). */
double
bl_tail_log1mexp (double x)
{
  if (!(x <= 0.0))
    return NAN;
  return x > -M_LN2 ? log (-expm1 (x)) : log1p (-exp (x));
}

/* log(e^a + e^b) = max + log1p(exp(min - max)) (common practice, no source). */
double
bl_tail_logaddexp (double a, double b)
{
  const double hi = a > b ? a : b, lo = a > b ? b : a;
  if (hi == -HUGE_VAL)
    return -HUGE_VAL;
  if (isnan (a) || isnan (b))
    return NAN;
  return hi + log1p (exp (lo - hi));
}

/* ---------------------------------------------------------------- the normal */

/*
 * log Q(x), Q(x) = P(Z > x).  For x < -1, log1p(-Phi(x)) with Phi(x) < 0.16 computed
 * directly; up to x = 37, the log of GSL's Q (Cody's rational approximations, with
 * exp(-x^2/2) split so that it keeps its digits); beyond, where Q leaves the normal doubles,
 * the asymptotic expansion of Mills' ratio (Abramowitz & Stegun 1964, 26.2.12):
 *   log Q(x) = -x^2/2 - log x - log sqrt(2 pi) + log(1 - 1/x^2 + 1*3/x^4 - 1*3*5/x^6 + ...),
 * whose terms fall below 1e-17 within 8 terms for x >= 37.
 */
double
bl_tail_norm_logQ (double x)
{
  if (isnan (x))
    return NAN;
  if (x < -1.0)
    return log1p (-gsl_cdf_ugaussian_P (x));
  if (x < NORM_ASYMP_X)
    return log (gsl_cdf_ugaussian_Q (x));
  if (x == HUGE_VAL)
    return -HUGE_VAL;
  {
    const double t = 1.0 / (x * x);
    double term = 1.0, r = 0.0;
    for (int k = 1; k <= 40; k++) {
      term *= -(2.0 * k - 1.0) * t;
      r += term;
      if (fabs (term) < 1e-18)
        break;
    }
    return -0.5 * x * x - log (x) - LOG_SQRT_2PI + log1p (r);
  }
}

double bl_tail_norm_logP (double x) { return bl_tail_norm_logQ (-x); }

/* log P(a < Z <= b): both ends below 0, the lower tails log Phi(b) + log(1 - Phi(a)/Phi(b));
   both above, the upper tails log Q(a) + log(1 - Q(b)/Q(a)); across 0, (erf(b/sqrt 2) +
   erf(-a/sqrt 2)) / 2, a sum of two positive numbers (Abramowitz & Stegun 7.1.1, 26.2.29). */
double
bl_tail_norm_log_interval (double a, double b)
{
  if (isnan (a) || isnan (b))
    return NAN;
  if (!(a < b))
    return -HUGE_VAL;
  if (b <= 0.0) {
    const double lb = bl_tail_norm_logP (b);
    return lb + bl_tail_log1mexp (bl_tail_norm_logP (a) - lb);
  }
  if (a >= 0.0) {
    const double la = bl_tail_norm_logQ (a);
    return la + bl_tail_log1mexp (bl_tail_norm_logQ (b) - la);
  }
  return log (0.5 * (gsl_sf_erf (b / M_SQRT2) + gsl_sf_erf (-a / M_SQRT2)));
}

/* The x with log Q(x) = lq: GSL's inverse where exp(lq) is a normal double; below, Newton's
   method on f(x) = log Q(x) - lq, f'(x) = -phi(x) / Q(x), from the first two terms of the
   asymptotic form x^2 = -2 lq - 2 log x - log 2 pi (common practice, no source). */
double
bl_tail_norm_Qinv_log (double lq)
{
  double x;
  if (isnan (lq) || lq > 0.0)
    return NAN;
  if (lq == 0.0)
    return -HUGE_VAL;
  if (lq == -HUGE_VAL)
    return HUGE_VAL;
  if (lq > -700.0)
    return gsl_cdf_ugaussian_Qinv (exp (lq));
  x = sqrt (-2.0 * lq);
  x = sqrt (-2.0 * lq - 2.0 * log (x) - 2.0 * LOG_SQRT_2PI);
  for (int it = 0; it < 60; it++) {
    const double lQ = bl_tail_norm_logQ (x);
    const double dx = (lQ - lq) / exp (-0.5 * x * x - LOG_SQRT_2PI - lQ);
    x += dx;
    if (fabs (dx) <= 4.0 * DBL_EPSILON * x)
      break;
  }
  return x;
}

/* ---------------------------------------------------------------- the gamma */

/* log(1 + t) - t: the power series -t^2/2 + t^3/3 - ... for |t| < 1/4 (where the direct form
   loses digits to cancellation), else directly (common practice, no source). */
static double
log1pmx (double t)
{
  if (fabs (t) < 0.25) {
    double s = 0.0, pw = t;
    for (int k = 2; k < 80; k++) {
      double term;
      pw *= -t;
      term = pw / k;
      s += term;
      if (fabs (term) < 1e-18 * fabs (s))
        break;
    }
    return s;
  }
  return log1p (t) - t;
}

/* lgamma(a) - [(a - 1/2) log a - a + log sqrt(2 pi)], a >= 10: Stirling's series
   (Abramowitz & Stegun 6.1.41), seven terms (the next is below 3e-17 at a = 10). */
static double
stirling_corr (double a)
{
  const double r = 1.0 / a, r2 = r * r;
  return r * (1.0 / 12.0 - r2 * (1.0 / 360.0 - r2 * (1.0 / 1260.0 - r2 * (1.0 / 1680.0
         - r2 * (1.0 / 1188.0 - r2 * (691.0 / 360360.0 - r2 / 156.0))))));
}

/* log [x^a e^-x / Gamma(a)], the prefactor of both incomplete gamma functions.  For a >= 10
   it is written as a (log1p(t) - t) + log(a) / 2 - log sqrt(2 pi) - corr(a), t = (x - a) / a,
   which keeps its digits where a log x, x and lgamma(a) are each large and nearly cancel
   (the same rearrangement as Temme 1979, SIAM J. Math. Anal. 10, 757-766, eq. 1.4). */
static double
gamma_log_prefix (double a, double x)
{
  if (a < 10.0)
    return a * log (x) - x - gsl_sf_lngamma (a);
  return a * log1pmx ((x - a) / a) + 0.5 * log (a) - LOG_SQRT_2PI - stirling_corr (a);
}

/* log Q(a, x) by the continued fraction, for x > a + 1 (Press, Teukolsky, Vetterling &
   Flannery 1992, Numerical Recipes in C, 2nd ed., section 6.2, eq. 6.2.7, evaluated by the
   modified Lentz method, section 5.2), with its prefactor in log space. */
static double
gamma_logQ_cf (double a, double x)
{
  double b = x + 1.0 - a, c = 1.0 / CF_TINY, d = 1.0 / b, h = d;
  for (int i = 1; i < CF_MAX; i++) {
    const double an = -i * (i - a);
    double del;
    b += 2.0;
    d = an * d + b;
    if (fabs (d) < CF_TINY)
      d = CF_TINY;
    c = b + an / c;
    if (fabs (c) < CF_TINY)
      c = CF_TINY;
    d = 1.0 / d;
    del = d * c;
    h *= del;
    if (fabs (del - 1.0) < CF_EPS)
      break;
  }
  return gamma_log_prefix (a, x) + log (h);
}

/* log P(a, x) by the series P = x^a e^-x / Gamma(a) sum_n x^n / (a (a+1) ... (a+n)), for
   x < a + 1 (Abramowitz & Stegun 6.5.29; Numerical Recipes section 6.2, eq. 6.2.5). */
static double
gamma_logP_series (double a, double x)
{
  double ap = a, del = 1.0 / a, sum = del;
  for (int n = 1; n < CF_MAX; n++) {
    ap += 1.0;
    del *= x / ap;
    sum += del;
    if (fabs (del) < fabs (sum) * CF_EPS)
      break;
  }
  return gamma_log_prefix (a, x) + log (sum);
}

double
bl_tail_gamma_logQ (double a, double x)
{
  gsl_sf_result r;
  if (isnan (a) || isnan (x) || !(a > 0.0) || x < 0.0)
    return NAN;
  if (x == 0.0)
    return 0.0;
  if (x == HUGE_VAL)
    return -HUGE_VAL;
  if (gsl_sf_gamma_inc_Q_e (a, x, &r) == GSL_SUCCESS && r.val > TAIL_MIN) {
    if (r.val > 0.5 && gsl_sf_gamma_inc_P_e (a, x, &r) == GSL_SUCCESS)
      return log1p (-r.val);        /* Q near 1: from the small lower tail */
    return log (r.val);
  }
  if (x > a + 1.0)
    return gamma_logQ_cf (a, x);
  return log1p (-exp (bl_tail_gamma_logP (a, x)));
}

double
bl_tail_gamma_logP (double a, double x)
{
  gsl_sf_result r;
  if (isnan (a) || isnan (x) || !(a > 0.0) || x < 0.0)
    return NAN;
  if (x == 0.0)
    return -HUGE_VAL;
  if (x == HUGE_VAL)
    return 0.0;
  if (gsl_sf_gamma_inc_P_e (a, x, &r) == GSL_SUCCESS && r.val > TAIL_MIN) {
    if (r.val > 0.5 && gsl_sf_gamma_inc_Q_e (a, x, &r) == GSL_SUCCESS)
      return r.val > TAIL_MIN ? log1p (-r.val) : -exp (bl_tail_gamma_logQ (a, x));
    return log (r.val);
  }
  if (x < a + 1.0)
    return gamma_logP_series (a, x);
  return bl_tail_log1mexp (bl_tail_gamma_logQ (a, x));
}

/* ---------------------------------------------------------------- the beta */

/* The continued fraction of I_x(a, b) (Numerical Recipes section 6.4, eq. 6.4.5, modified
   Lentz), converging fast for x < (a + 1) / (a + b + 2). */
static double
betacf (double a, double b, double x)
{
  const double qab = a + b, qap = a + 1.0, qam = a - 1.0;
  double c = 1.0, d = 1.0 - qab * x / qap, h;
  if (fabs (d) < CF_TINY)
    d = CF_TINY;
  d = 1.0 / d;
  h = d;
  for (int m = 1; m < CF_MAX; m++) {
    const double m2 = 2.0 * m;
    double aa = m * (b - m) * x / ((qam + m2) * (a + m2)), del;
    d = 1.0 + aa * d;
    if (fabs (d) < CF_TINY)
      d = CF_TINY;
    c = 1.0 + aa / c;
    if (fabs (c) < CF_TINY)
      c = CF_TINY;
    d = 1.0 / d;
    h *= d * c;
    aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2));
    d = 1.0 + aa * d;
    if (fabs (d) < CF_TINY)
      d = CF_TINY;
    c = 1.0 + aa / c;
    if (fabs (c) < CF_TINY)
      c = CF_TINY;
    d = 1.0 / d;
    del = d * c;
    h *= del;
    if (fabs (del - 1.0) < CF_EPS)
      break;
  }
  return h;
}

/* log I_x(a, b) = a log x + b log(1 - x) - log a - log B(a, b) + log cf(a, b, x), for x below
   (a + 1) / (a + b + 2); on the other side 1 - I_x1(b, a) (Numerical Recipes eq. 6.4.5). */
static double
beta_logI_cf (double a, double b, double x, double x1)
{
  if (x < (a + 1.0) / (a + b + 2.0))
    return a * log (x) + b * log (x1) - log (a) - gsl_sf_lnbeta (a, b) + log (betacf (a, b, x));
  return bl_tail_log1mexp (b * log (x1) + a * log (x) - log (b) - gsl_sf_lnbeta (a, b)
                           + log (betacf (b, a, x1)));
}

double
bl_tail_beta_logI (double a, double b, double x, double x1)
{
  gsl_sf_result r;
  if (isnan (a) || isnan (b) || isnan (x) || !(a > 0.0) || !(b > 0.0) || x < 0.0 || x > 1.0)
    return NAN;
  if (x == 0.0)
    return -HUGE_VAL;
  if (x1 <= 0.0)
    return 0.0;
  if (gsl_sf_beta_inc_e (a, b, x, &r) == GSL_SUCCESS && r.val > TAIL_MIN) {
    if (r.val > 0.5 && gsl_sf_beta_inc_e (b, a, x1, &r) == GSL_SUCCESS && r.val > TAIL_MIN)
      return log1p (-r.val);        /* near 1: from the small complement */
    if (r.val <= 0.5)
      return log (r.val);
  }
  return beta_logI_cf (a, b, x, x1);
}

/* ---------------------------------------------------------------- p-values */

/* chi-square on k dof: Q(k/2, x/2) (Abramowitz & Stegun 26.4.19). */
double
bl_tail_chisq_logQ (double x, double dof)
{
  if (isnan (x))
    return NAN;
  return x <= 0.0 ? 0.0 : bl_tail_gamma_logQ (0.5 * dof, 0.5 * x);
}

/* F on (d1, d2): P(F > f) = I_w(d2/2, d1/2), w = d2 / (d2 + d1 f) (A & S 26.6.2). */
double
bl_tail_f_logQ (double f, double d1, double d2)
{
  if (isnan (f))
    return NAN;
  if (f <= 0.0)
    return 0.0;
  return bl_tail_beta_logI (0.5 * d2, 0.5 * d1, d2 / (d2 + d1 * f), d1 * f / (d2 + d1 * f));
}

/* Two-sided t on nu: P(|T| > t) = I_w(nu/2, 1/2), w = nu / (nu + t^2) (A & S 26.7.1);
   nu = HUGE_VAL: 2 Q(|t|). */
double
bl_tail_t_logp2 (double t, double nu)
{
  const double t2 = t * t;
  if (isnan (t))
    return NAN;
  if (nu == HUGE_VAL)
    return M_LN2 + bl_tail_norm_logQ (fabs (t));
  if (t == 0.0)
    return 0.0;
  return bl_tail_beta_logI (0.5 * nu, 0.5, nu / (nu + t2), t2 / (nu + t2));
}
