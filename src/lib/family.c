/* family.c -- the family table, its lookups and accessors, and the generic drivers over rows
   (log-likelihood sums, the dispersion MLE, the discrete quantile search).

   Each family's formulas live in its own file, family_NAME.c, with their sources; this file
   knows no family by name: adding one is its file, its tests and one line of the table. */
#include <float.h>
#include <limits.h>
#include <math.h>
#include <string.h>
#include "error.h"
#include "family.h"
#include "family_impl.h"
#include "family_tails.h"

/* The family table: the one list of families (lookup, --help, error messages). */
static const bl_family *const all_families[] = {
  &bl_family_gaussian, &bl_family_poisson, &bl_family_gamma, &bl_family_invgauss,
  &bl_family_negbin, &bl_family_tweedie
};
#define NFAMILIES (sizeof all_families / sizeof all_families[0])

const bl_family *
bl_family_find (const char *name)
{
  for (size_t i = 0; i < NFAMILIES; i++)
    if (strcmp (all_families[i]->name, name) == 0)
      return all_families[i];
  return NULL;
}

size_t bl_family_count (void) { return NFAMILIES; }
const bl_family *bl_family_at (size_t i) { return i < NFAMILIES ? all_families[i] : NULL; }

size_t
bl_family_names (char *buf, size_t len, const char *sep)
{
  const char *names[NFAMILIES];
  for (size_t i = 0; i < NFAMILIES; i++)
    names[i] = all_families[i]->name;
  return bl_join_names (buf, len, sep, names, NFAMILIES);
}

/* ---- the accessors */

int bl_family_has (const bl_family *f, unsigned flag) { return (f->flags & flag) != 0; }
bl_family_par bl_family_par_kind (const bl_family *f) { return (bl_family_par) f->par_kind; }
const char *bl_family_name (const bl_family *f) { return f->name; }
const char *bl_family_noun (const bl_family *f) { return f->noun; }
const char *bl_family_support (const bl_family *f) { return f->support; }
const char *bl_family_outside (const bl_family *f) { return f->outside; }
const char *bl_family_par_name (const bl_family *f) { return f->par_name; }
const bl_link *bl_family_default_link (const bl_family *f) { return f->default_link; }
double bl_family_var_power (const bl_family *f) { return f->var_power; }
int bl_family_y_ok (const bl_family *f, double y) { return f->y_ok (y); }
int bl_family_mu_ok (const bl_family *f, double mu) { return f->valid_mu (mu); }
double bl_family_mustart (const bl_family *f, double y, double ybar)
{
  return f->mustart (y, ybar);
}

/* ---- the per-row hooks */

double bl_family_var (const bl_family *f, double mu, double par) { return f->var (mu, par); }

double
bl_family_dev (const bl_family *f, double y, double mu, double par)
{
  return f->unit_dev (y, mu, par);
}

double
bl_family_logpdf (const bl_family *f, double y, double mu, double a, double phi, double par)
{
  return f->logpdf (y, mu, a, phi, par);
}

double
bl_family_cdf (const bl_family *f, double y, double mu, double a, double phi, double par,
               bl_family_scale form)
{
  return f->cdf (y, mu, a, phi, par, (int) form);
}

double
bl_family_logcdf (const bl_family *f, double y, double mu, double a, double phi, double par,
                  bl_family_scale form)
{
  return f->logcdf (y, mu, a, phi, par, (int) form);
}

double
bl_family_logsf (const bl_family *f, double y, double mu, double a, double phi, double par,
                 bl_family_scale form)
{
  return f->logsf (y, mu, a, phi, par, (int) form);
}

/*
 * log P(lo < Y <= hi) = log [F(hi) - F(lo)], computed where the interval's mass is:
 *   F(lo) > 1/2 (above the median):  log S(lo) + log(1 - exp(log S(hi) - log S(lo)));
 *   S(hi) > 1/2 (below the median):  log F(hi) + log(1 - exp(log F(lo) - log F(hi)));
 *   across the median:              log(1 - F(lo) - S(hi)), F(lo), S(hi) < 1/2;
 * log(1 - e^x) by bl_tail_log1mexp (Maechler 2012).  The difference of two CDFs that both
 * round to 1 (a row 9 sd above its mean) so becomes the difference of two small upper
 * tails, each with its own digits (common practice, no source).
 */
double
bl_family_log_interval (const bl_family *f, double lo, double hi, double mu, double a,
                        double phi, double par, bl_family_scale form)
{
  const int fm = (int) form;
  double lflo, lshi;
  if (isnan (lo) || isnan (hi))
    return NAN;
  if (!(lo < hi))
    return -HUGE_VAL;
  lflo = lo == -HUGE_VAL ? -HUGE_VAL : f->logcdf (lo, mu, a, phi, par, fm);
  lshi = hi == HUGE_VAL ? -HUGE_VAL : f->logsf (hi, mu, a, phi, par, fm);
  if (lflo == -HUGE_VAL)          /* no mass at or below lo: P(Y <= hi) */
    return hi == HUGE_VAL ? 0.0 : f->logcdf (hi, mu, a, phi, par, fm);
  if (lshi == -HUGE_VAL)          /* no mass above hi: P(Y > lo) */
    return f->logsf (lo, mu, a, phi, par, fm);
  if (lflo > -M_LN2) {
    const double lslo = f->logsf (lo, mu, a, phi, par, fm);
    return lslo + bl_tail_log1mexp (lshi - lslo > 0.0 ? 0.0 : lshi - lslo);
  }
  if (lshi > -M_LN2) {
    const double lfhi = f->logcdf (hi, mu, a, phi, par, fm);
    return lfhi + bl_tail_log1mexp (lflo - lfhi > 0.0 ? 0.0 : lflo - lfhi);
  }
  return log1p (-(exp (lflo) + exp (lshi)));
}

double
bl_family_quantile_upper (const bl_family *f, double q, double mu, double a, double phi,
                          double par)
{
  return f->quantile_upper (q, mu, a, phi, par);
}

double
bl_family_quantile_mu_max (const bl_family *f)
{
  return f->quantile_mu_max > 0.0 ? f->quantile_mu_max : HUGE_VAL;
}

double
bl_family_quantile (const bl_family *f, double prob, double mu, double a, double phi,
                    double par)
{
  return f->quantile (prob, mu, a, phi, par);
}

/* ---- helpers shared by the family files (family_impl.h) */

int bl_family_y_real (double y) { return isfinite (y); }
int bl_family_y_nonneg (double y) { return isfinite (y) && y >= 0.0; }
int bl_family_y_pos (double y) { return isfinite (y) && y > 0.0; }
int bl_family_mu_real (double mu) { return isfinite (mu); }
int bl_family_mu_pos (double mu) { return isfinite (mu) && mu > 0.0; }

double
bl_family_ylogy (double y, double mu)
{
  return y > 0.0 ? y * log (y / mu) : 0.0;
}

double bl_family_clamp_dev (double d) { return d > 0.0 ? d : 0.0; }

int
bl_family_phi_dev_n (const double *y, const double *mu, const double *a, size_t n, double dev,
                     double *phi, bl_err *err)
{
  (void) y; (void) mu; (void) a; (void) err;
  *phi = dev / (double) n;
  return BL_OK;
}

/* Smallest integer k >= 0 with CDF(k) >= P, from the start K0 (a normal approximation):
   doubling steps away from it until the answer is bracketed, then bisection over the
   integers, so that an extreme level or a large mean costs some 2 log2(k) evaluations
   rather than one per unit (the quantile's definition; common practice, no source).  The
   CDF is nondecreasing in k.  Returns HUGE_VAL when no k below UINT_MAX/2 reaches P.
   (Moved from model.c's prediction intervals, unchanged.) */
double
bl_family_discrete_quantile (const bl_family *f, double p, double k0, double mu, double a,
                             double phi, double par)
{
  const double kmax = (double) UINT_MAX / 2.0;
  double lo, hi, step = 1.0;   /* invariant: CDF(lo) < p <= CDF(hi), or lo = -1 */
#define CDF(k) f->cdf ((double) (unsigned) (k), mu, a, phi, par, BL_FAM_SCALE_MUL)
  if (!(k0 >= 0.0))
    k0 = 0.0;
  if (k0 > kmax)
    k0 = kmax;
  k0 = floor (k0);
  if (CDF (k0) >= p) {
    hi = k0;
    lo = k0 - step;
    while (lo >= 0.0 && CDF (lo) >= p) {
      hi = lo;
      step *= 2.0;
      lo = hi - step;
    }
    if (lo < 0.0)
      lo = -1.0;
  } else {
    lo = k0;
    hi = k0 + step;
    while (CDF (hi) < p) {
      if (hi >= kmax)
        return HUGE_VAL;
      lo = hi;
      step *= 2.0;
      hi = lo + step < kmax ? lo + step : kmax;
    }
  }
  while (hi - lo > 1.0) {
    const double mid = floor (lo + (hi - lo) / 2.0);
    if (mid >= 0.0 && CDF (mid) >= p)
      hi = mid;
    else
      lo = mid;
  }
#undef CDF
  return hi;
}

/* The least integer k >= 0 with P(Y > k) <= q: the search above on the log upper tail,
   bracketed by doubling from K0 and bisected over the integers (log S is nonincreasing in
   k; common practice, no source).  HUGE_VAL when no k below UINT_MAX / 2 reaches q. */
double
bl_family_discrete_quantile_upper (const bl_family *f, double q, double k0, double mu,
                                   double a, double phi, double par)
{
  const double kmax = (double) UINT_MAX / 2.0, lq = log (q);
  double lo, hi, step = 1.0;   /* invariant: log S(lo) > lq >= log S(hi), or lo = -1 */
#define LSF(k) f->logsf ((k), mu, a, phi, par, BL_FAM_SCALE_MUL)
  if (!(q > 0.0))
    return HUGE_VAL;
  if (!(k0 >= 0.0))
    k0 = 0.0;
  if (k0 > kmax)
    k0 = kmax;
  k0 = floor (k0);
  if (LSF (k0) <= lq) {
    hi = k0;
    lo = k0 - step;
    while (lo >= 0.0 && LSF (lo) <= lq) {
      hi = lo;
      step *= 2.0;
      lo = hi - step;
    }
    if (lo < 0.0)
      lo = -1.0;
  } else {
    lo = k0;
    hi = k0 + step;
    while (LSF (hi) > lq) {
      if (hi >= kmax)
        return HUGE_VAL;
      lo = hi;
      step *= 2.0;
      hi = lo + step < kmax ? lo + step : kmax;
    }
  }
  while (hi - lo > 1.0) {
    const double mid = floor (lo + (hi - lo) / 2.0);
    if (mid >= 0.0 && LSF (mid) <= lq)
      hi = mid;
    else
      lo = mid;
  }
#undef LSF
  return hi;
}

/* The y > 0 with log P(Y > y) = log q: a bracket doubled up from Y0, then bisection to the
   last bits (the upper tail is continuous and nonincreasing; common practice, no source).
   0 when P(Y > 0) <= q (a point mass at 0 holds the quantile). */
double
bl_family_sf_bisect (const bl_family *f, double q, double y0, double mu, double a, double phi,
                     double par)
{
  const double lq = log (q);
  double lo = 0.0, hi = y0 > 0.0 ? y0 : 1.0;
#define LSF(y) f->logsf ((y), mu, a, phi, par, BL_FAM_SCALE_MUL)
  if (!(q > 0.0))
    return HUGE_VAL;
  if (!(q < 1.0) || LSF (0.0) <= lq)
    return 0.0;
  for (int k = 0; k < 2000 && LSF (hi) > lq; k++) {
    lo = hi;
    hi *= 2.0;
  }
  for (int k = 0; k < 2000 && hi - lo > 4.0 * DBL_EPSILON * hi; k++) {
    const double mid = 0.5 * (lo + hi);
    if (LSF (mid) > lq)
      lo = mid;
    else
      hi = mid;
  }
#undef LSF
  return 0.5 * (lo + hi);
}

/* ---- the drivers over rows */

double
bl_family_loglik_p (const bl_family *fam, const double *y, const double *mu, const double *a,
                    size_t n, double phi, double par)
{
  long double s = 0.0L;
  if (!a && fam->loglik_unit)
    return fam->loglik_unit (y, mu, n, phi, par);
  for (size_t i = 0; i < n; i++)
    s += fam->logpdf (y[i], mu[i], a ? a[i] : 1.0, phi, par);
  return (double) s;
}

double
bl_family_loglik (const bl_family *fam, const double *y, const double *mu, const double *a,
                  size_t n, double phi)
{
  return bl_family_loglik_p (fam, y, mu, a, n, phi, 0.0);
}

int
bl_family_phi_ml (const bl_family *fam, const double *y, const double *mu, const double *a,
                  size_t n, double dev, double *phi, bl_err *err)
{
  if (!(fam->flags & BL_FAM_PHI_FREE) || !fam->phi_ml) {
    *phi = 1.0;
    return BL_OK;
  }
  if (!(dev > 0.0))
    return bl_fail (err, BL_EDATA, fam->name,
                    "the deviance is 0 (a perfect fit): the dispersion MLE is 0");
  return fam->phi_ml (y, mu, a, n, dev, phi, err);
}
