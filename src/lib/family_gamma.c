/* family_gamma.c -- the gamma family: V = mu^2, the gamma density, CDF and quantile, and the
   maximum-likelihood shape.

   McCullagh & Nelder (1989), Generalized Linear Models, 2nd ed., Chapman & Hall, table 2.1
   and sections 2.3, 8.2, 8.3. */
#include <math.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_gamma.h>
#include <gsl/gsl_sf_psi.h>
#include "family.h"
#include "family_impl.h"
#include "family_tails.h"

/* V = mu^2, d = 2 [-log(y/mu) + (y - mu)/mu],
   with shape nu a and mean mu: log f = nu a log(nu a y / mu) - nu a y / mu - log y
   - lgamma(nu a), nu = 1/phi */
static double gam_var (double mu, double par) { (void) par; return mu * mu; }
static double
gam_dev (double y, double mu, double par)
{
  (void) par;
  return bl_family_clamp_dev (2.0 * (-log (y / mu) + (y - mu) / mu));
}
static double
gam_logpdf (double y, double mu, double a, double phi, double par)
{
  const double s = a / phi;   /* shape of this row */
  (void) par;
  return s * log (s * y / mu) - s * y / mu - log (y) - gsl_sf_lngamma (s);
}
static double pos_start (double y, double ybar) { (void) ybar; return y; }

/* The same sum over rows with every a_i = 1, lgamma(1/phi) taken out of the loop (one shape
   for every row). */
static double
gam_loglik_unit (const double *y, const double *mu, size_t n, double phi, double par)
{
  long double s = 0.0L;
  const double sh = 1.0 / phi;
  (void) par;
  for (size_t i = 0; i < n; i++)
    s += sh * log (sh * y[i] / mu[i]) - sh * y[i] / mu[i] - log (y[i]);
  return (double) (s - (long double) n * gsl_sf_lngamma (sh));
}

/* The gamma CDF with shape a / phi and mean mu (GSL's gamma CDF, scale = mean / shape).  The
   scale is rounded as mu phi / a (BL_FAM_SCALE_MUL: the comparer's discretized likelihood,
   the prediction quantiles) or as mu / shape (BL_FAM_SCALE_DIV: the quantile residuals):
   the two differ in the last bit, and each caller keeps its own (family.h). */
static double
gam_cdf (double y, double mu, double a, double phi, double par, int form)
{
  const double shape = a / phi;
  (void) par;
  if (!(y > 0.0))
    return 0.0;
  return gsl_cdf_gamma_P (y, shape, form == BL_FAM_SCALE_DIV ? mu / shape : mu * phi / a);
}
/* log P(shape, y / scale) and log Q(shape, y / scale), the regularized incomplete gamma
   functions in log space (family_tails.c), the scale rounded as in gam_cdf */
static double
gam_logcdf (double y, double mu, double a, double phi, double par, int form)
{
  const double shape = a / phi;
  (void) par;
  if (!(y > 0.0))
    return -HUGE_VAL;
  return bl_tail_gamma_logP (shape, y / (form == BL_FAM_SCALE_DIV ? mu / shape : mu * phi / a));
}
static double
gam_logsf (double y, double mu, double a, double phi, double par, int form)
{
  const double shape = a / phi;
  (void) par;
  if (!(y > 0.0))
    return 0.0;
  return bl_tail_gamma_logQ (shape, y / (form == BL_FAM_SCALE_DIV ? mu / shape : mu * phi / a));
}
static double
gam_quantile_upper (double q, double mu, double a, double phi, double par)
{
  (void) par;
  return gsl_cdf_gamma_Qinv (q, a / phi, mu * phi / a);
}
static double
gam_quantile (double prob, double mu, double a, double phi, double par)
{
  (void) par;
  return gsl_cdf_gamma_Pinv (prob, a / phi, mu * phi / a);
}

/* Gamma shape score f(nu) = sum a [log(nu a) - psi(nu a)] - D/2, strictly decreasing in nu
   (log x - psi(x) decreases from +inf to 0).  Solved by Newton on log nu inside a bracket that
   is kept valid, so the iteration cannot leave it (common practice, no source). */
static int
gamma_shape (const double *a, size_t n, double dev, double *nu_out)
{
  double lo = -60.0, hi = 60.0;   /* bracket on t = log nu */
  double t, sa = 0.0;
  for (size_t i = 0; i < n; i++)
    sa += a ? a[i] : 1.0;
  {
    /* Starting value: nu approximately (6 + 2 Dbar) / (Dbar (6 + Dbar)), Dbar = D / sum a
       (McCullagh & Nelder 1989, eq. 8.6; from memory). */
    const double db = dev / sa;
    t = log ((6.0 + 2.0 * db) / (db * (6.0 + db)));
    if (!(t > lo && t < hi))
      t = 0.0;
  }
  for (int it = 0; it < 200; it++) {
    const double nu = exp (t);
    long double f = -0.5L * dev, fp = 0.0L;
    gsl_sf_result r0, r1;
    if (!a) {
      /* no prior weights: every row has the same argument, one evaluation serves all */
      if (gsl_sf_psi_e (nu, &r0) != GSL_SUCCESS || gsl_sf_psi_1_e (nu, &r1) != GSL_SUCCESS)
        return BL_ENOCONV;
      f += (long double) n * (log (nu) - r0.val);
      fp += (long double) n * (1.0 - nu * r1.val);
    } else {
      for (size_t i = 0; i < n; i++) {
        const double ai = a[i], x = nu * ai;
        if (gsl_sf_psi_e (x, &r0) != GSL_SUCCESS || gsl_sf_psi_1_e (x, &r1) != GSL_SUCCESS)
          return BL_ENOCONV;
        f += ai * (log (x) - r0.val);
        fp += ai * (1.0 - x * r1.val);   /* d/dt of a (log(nu a) - psi(nu a)) */
      }
    }
    if (f > 0.0L)
      lo = t;                            /* root lies at larger nu */
    else
      hi = t;
    {
      double tn = (fp != 0.0L) ? t - (double) (f / fp) : 0.5 * (lo + hi);
      if (!(tn > lo && tn < hi))
        tn = 0.5 * (lo + hi);            /* bisect when Newton leaves the bracket */
      if (fabs (tn - t) <= 1e-14 * (1.0 + fabs (t)) || hi - lo <= 1e-14 * (1.0 + fabs (t))) {
        *nu_out = exp (tn);
        return BL_OK;
      }
      t = tn;
    }
  }
  return BL_ENOCONV;
}

static int
gam_phi_ml (const double *y, const double *mu, const double *a, size_t n, double dev,
            double *phi, bl_err *err)
{
  double nu;
  (void) y; (void) mu;
  if (gamma_shape (a, n, dev, &nu) != BL_OK)
    return bl_fail (err, BL_ENOCONV, "gamma",
                    "the maximum-likelihood shape equation could not be solved");
  *phi = 1.0 / nu;
  return BL_OK;
}

const bl_family bl_family_gamma = {
  .name = "gamma", .noun = "gamma", .support = "y > 0", .outside = "y <= 0",
  .par_name = NULL, .default_link = &bl_link_inverse,
  .flags = BL_FAM_PHI_FREE, .par_kind = BL_FAMPAR_NONE,
  .phi_free = 1, .discrete = 0, .var_power = 2.0,
  .y_ok = bl_family_y_pos, .valid_mu = bl_family_mu_pos, .mustart = pos_start,
  .var = gam_var, .unit_dev = gam_dev, .logpdf = gam_logpdf, .cdf = gam_cdf,
  .logcdf = gam_logcdf, .logsf = gam_logsf, .quantile_upper = gam_quantile_upper,
  .quantile = gam_quantile, .phi_ml = gam_phi_ml, .loglik_unit = gam_loglik_unit
};
