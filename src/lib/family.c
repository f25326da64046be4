/* family.c -- the four variance families as descriptors, and their dispersion MLE.

   Variance functions, unit deviances and densities: McCullagh & Nelder (1989), Generalized
   Linear Models, 2nd ed., Chapman & Hall, table 2.1 and sections 2.3, 8.2; the inverse
   gaussian density from Chhikara & Folks (1989), The Inverse Gaussian Distribution, eq. 2.1. */
#include <float.h>
#include <math.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_gamma.h>
#include <gsl/gsl_sf_psi.h>
#include "family.h"
#include "tweedie.h"

#define LOG_2PI 1.8378770664093454835606594728112   /* log(2 pi) */

static int any_real (double y) { return isfinite (y); }
static int nonneg (double y) { return isfinite (y) && y >= 0.0; }
static int positive (double y) { return isfinite (y) && y > 0.0; }
static int mu_any (double mu) { return isfinite (mu); }
static int mu_pos (double mu) { return isfinite (mu) && mu > 0.0; }

/* y log(y / mu), taken as 0 at y = 0 (its limit). */
static double
ylogy (double y, double mu)
{
  return y > 0.0 ? y * log (y / mu) : 0.0;
}

/* ---- gaussian: V = 1, d = (y - mu)^2,
   log f = -1/2 log(2 pi phi / a) - a (y - mu)^2 / (2 phi) */
static double gau_var (double mu) { (void) mu; return 1.0; }
static double gau_dev (double y, double mu) { return (y - mu) * (y - mu); }
static double
gau_logpdf (double y, double mu, double a, double phi)
{
  return -0.5 * (LOG_2PI + log (phi / a)) - a * (y - mu) * (y - mu) / (2.0 * phi);
}
static double gau_start (double y, double ybar) { (void) ybar; return y; }

/* ---- poisson: V = mu, d = 2 [y log(y/mu) - (y - mu)],
   log P = a [y log mu - mu - lgamma(y + 1)] (prior weights multiply the log-likelihood) */
static double poi_var (double mu) { return mu; }
/* The unit deviances are >= 0 in exact arithmetic; rounding near y = mu can leave a tiny
   negative value, which is clamped (common practice, no source). */
static double nonneg_dev (double d) { return d > 0.0 ? d : 0.0; }
static double
poi_dev (double y, double mu)
{
  return nonneg_dev (2.0 * (ylogy (y, mu) - (y - mu)));
}
static double
poi_logpdf (double y, double mu, double a, double phi)
{
  (void) phi;
  return a * ((y > 0.0 ? y * log (mu) : 0.0) - mu - gsl_sf_lngamma (y + 1.0));
}
/* Start from y + 0.1 (mean space needs mu > 0; common practice, no source). */
static double poi_start (double y, double ybar) { (void) ybar; return y + 0.1; }

/* ---- gamma: V = mu^2, d = 2 [-log(y/mu) + (y - mu)/mu],
   with shape nu a and mean mu: log f = nu a log(nu a y / mu) - nu a y / mu - log y
   - lgamma(nu a), nu = 1/phi */
static double gam_var (double mu) { return mu * mu; }
static double gam_dev (double y, double mu)
{
  return nonneg_dev (2.0 * (-log (y / mu) + (y - mu) / mu));
}
static double
gam_logpdf (double y, double mu, double a, double phi)
{
  const double s = a / phi;   /* shape of this row */
  return s * log (s * y / mu) - s * y / mu - log (y) - gsl_sf_lngamma (s);
}
static double pos_start (double y, double ybar) { (void) ybar; return y; }

/* ---- inverse gaussian: V = mu^3, d = (y - mu)^2 / (mu^2 y),
   log f = -1/2 log(2 pi phi y^3 / a) - a (y - mu)^2 / (2 phi mu^2 y) */
static double ig_var (double mu) { return mu * mu * mu; }
static double ig_dev (double y, double mu) { return (y - mu) * (y - mu) / (mu * mu * y); }
static double
ig_logpdf (double y, double mu, double a, double phi)
{
  return -0.5 * (LOG_2PI + log (phi * y * y * y / a)) - a * ig_dev (y, mu) / (2.0 * phi);
}

const bl_family bl_family_gaussian = {
  "gaussian", gau_var, gau_dev, mu_any, any_real, "any real y", 1, 0, &bl_link_identity,
  gau_logpdf, gau_start, NULL, NULL, NULL, NULL, BL_FAM_PHI_FREE | BL_FAM_NORMAL, BL_FAMPAR_NONE
};
const bl_family bl_family_poisson = {
  "poisson", poi_var, poi_dev, mu_pos, nonneg, "y >= 0", 0, 1, &bl_link_log,
  poi_logpdf, poi_start, NULL, NULL, NULL, NULL,
  BL_FAM_DISCRETE | BL_FAM_OVERDISP | BL_FAM_ZERO_GROUP, BL_FAMPAR_NONE
};
const bl_family bl_family_gamma = {
  "gamma", gam_var, gam_dev, mu_pos, positive, "y > 0", 1, 0, &bl_link_inverse,
  gam_logpdf, pos_start, NULL, NULL, NULL, NULL, BL_FAM_PHI_FREE, BL_FAMPAR_NONE
};
/* The canonical link of the inverse gaussian is 1/mu^2, which is not in ballast's link set;
   its default here is log. */
const bl_family bl_family_invgauss = {
  "inverse-gaussian", ig_var, ig_dev, mu_pos, positive, "y > 0", 1, 0, &bl_link_log,
  ig_logpdf, pos_start, NULL, NULL, NULL, NULL, BL_FAM_PHI_FREE, BL_FAMPAR_NONE
};

/* ---- negative binomial (NB2; Lawless 1987, Canad. J. Statist. 15, 209-225; Hilbe 2011,
   Negative Binomial Regression, 2nd ed., ch. 8): V = mu + mu^2 / theta,
   d = 2 [y log(y/mu) - (y + theta) log((y + theta) / (mu + theta))],
   log P = a [lgamma(y + theta) - lgamma(theta) - lgamma(y + 1) + theta log(theta / (theta +
   mu)) + y log(mu / (theta + mu))] */
static double nb_var (double mu, double th) { return mu + mu * mu / th; }
static double
nb_dev (double y, double mu, double th)
{
  return nonneg_dev (2.0 * (ylogy (y, mu) - (y + th) * log ((y + th) / (mu + th))));
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

/* ---- Tweedie, 1 < p < 2: V = mu^p, the unit deviance and density of tweedie.h; the row's
   dispersion is phi / a. */
static double tw_var (double mu, double p) { return exp (p * log (mu)); }
static double tw_dev (double y, double mu, double p) { return bl_tweedie_unit_dev (y, mu, p); }
static double
tw_logpdf (double y, double mu, double a, double phi, double p)
{
  return bl_tweedie_logpdf (y, mu, phi / a, p);
}
static double tw_start (double y, double ybar) { return y + 0.1 * ybar; }

const bl_family bl_family_negbin = {
  "negative-binomial", NULL, NULL, mu_pos, nonneg, "y >= 0", 0, 1, &bl_link_log,
  NULL, poi_start, nb_var, nb_dev, nb_logpdf, "theta", BL_FAM_DISCRETE, BL_FAMPAR_THETA
};
const bl_family bl_family_tweedie = {
  "tweedie", NULL, NULL, mu_pos, nonneg, "y >= 0", 1, 0, &bl_link_log,
  NULL, tw_start, tw_var, tw_dev, tw_logpdf, "power", BL_FAM_PHI_FREE | BL_FAM_ZERO_MASS,
  BL_FAMPAR_POWER
};

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
  size_t need = 0;
  if (len > 0)
    buf[0] = '\0';
  for (size_t i = 0; i < NFAMILIES; i++) {
    const char *parts[2] = { i ? sep : "", all_families[i]->name };
    for (int k = 0; k < 2; k++) {
      const size_t l = strlen (parts[k]);
      if (need + l < len) {
        memcpy (buf + need, parts[k], l);
        buf[need + l] = '\0';
      } else if (len > 0 && need < len) {
        memcpy (buf + need, parts[k], len - 1 - need);
        buf[len - 1] = '\0';
      }
      need += l;
    }
  }
  return need;
}

int bl_family_has (const bl_family *f, unsigned flag) { return (f->flags & flag) != 0; }
bl_family_par bl_family_par_kind (const bl_family *f) { return (bl_family_par) f->par_kind; }
const char *bl_family_name (const bl_family *f) { return f->name; }
const char *bl_family_support (const bl_family *f) { return f->support; }
const char *bl_family_par_name (const bl_family *f) { return f->par_name; }
const bl_link *bl_family_default_link (const bl_family *f) { return f->default_link; }
int bl_family_y_ok (const bl_family *f, double y) { return f->y_ok (y); }
int bl_family_mu_ok (const bl_family *f, double mu) { return f->valid_mu (mu); }
double bl_family_mustart (const bl_family *f, double y, double ybar)
{
  return f->mustart (y, ybar);
}

double
bl_family_loglik_p (const bl_family *fam, const double *y, const double *mu, const double *a,
                    size_t n, double phi, double par)
{
  long double s = 0.0L;
  if (!fam->logpdf_p)
    return bl_family_loglik (fam, y, mu, a, n, phi);
  for (size_t i = 0; i < n; i++)
    s += fam->logpdf_p (y[i], mu[i], a ? a[i] : 1.0, phi, par);
  return (double) s;
}

double
bl_family_loglik (const bl_family *fam, const double *y, const double *mu, const double *a,
                  size_t n, double phi)
{
  long double s = 0.0L;
  if (fam == &bl_family_gamma && !a) {
    /* the same sum with lgamma(1/phi) taken out of the loop (one shape for every row) */
    const double sh = 1.0 / phi;
    for (size_t i = 0; i < n; i++)
      s += sh * log (sh * y[i] / mu[i]) - sh * y[i] / mu[i] - log (y[i]);
    return (double) (s - (long double) n * gsl_sf_lngamma (sh));
  }
  for (size_t i = 0; i < n; i++)
    s += fam->logpdf (y[i], mu[i], a ? a[i] : 1.0, phi);
  return (double) s;
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

int
bl_family_phi_ml (const bl_family *fam, const double *y, const double *mu, const double *a,
                  size_t n, double dev, double *phi, bl_err *err)
{
  (void) y; (void) mu;
  if (!fam->phi_free) {
    *phi = 1.0;
    return BL_OK;
  }
  if (!(dev > 0.0))
    return bl_fail (err, BL_EDATA, fam->name,
                    "the deviance is 0 (a perfect fit): the dispersion MLE is 0");
  if (fam == &bl_family_gamma) {
    double nu;
    if (gamma_shape (a, n, dev, &nu) != BL_OK)
      return bl_fail (err, BL_ENOCONV, "gamma",
                      "the maximum-likelihood shape equation could not be solved");
    *phi = 1.0 / nu;
    return BL_OK;
  }
  *phi = dev / (double) n;   /* gaussian and inverse gaussian: closed form */
  return BL_OK;
}
