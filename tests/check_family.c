/* check_family.c -- the family and link descriptors (family.h, link.h).

   Every value is checked by a route that does not share code with family.c or link.c:
   - unit deviances against hand-evaluated closed forms, against the quasi-likelihood
     integral d(y, mu) = 2 int_mu^y (y - t) / V(t) dt evaluated by GSL quadrature, and against
     twice the log-likelihood ratio of GSL's own densities, d = 2 phi [l(y; y) - l(y; mu)]
     (McCullagh & Nelder 1989, Generalized Linear Models, 2nd ed., section 2.3);
   - V(mu) against table 2.1 of the same book, and against the curvature of the unit deviance
     at mu = y, d''(mu = y) = 2 / V(y) (from memory; follows from the integral form);
   - log densities against gsl_ran_*_pdf and the inverse gaussian density of Chhikara & Folks
     (1989), The Inverse Gaussian Distribution, Marcel Dekker;
   - links by g(g^-1(eta)) = eta and a central finite difference of g^-1;
   - the gamma dispersion MLE by plugging it back into its score equation with gsl_sf_psi
     (McCullagh & Nelder 1989, section 8.3);
   - the CDF hooks against GSL's distribution functions, the summed probabilities, and the
     densities integrated by GSL quadrature; the quantile hooks by round trips through the
     CDF and against model.c's prediction-interval algorithm, copied here as the reference;
   - the family table and the properties family.h documents. */
#include <check.h>
#include <float.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_sf_erf.h>
#include <gsl/gsl_sf_gamma.h>
#include <gsl/gsl_sf_psi.h>
#include "family.h"
#include "family_impl.h"      /* the descriptor's fields, checked against its flags */
#include "family_tails.h"
#include "link.h"
#include "testutil.h"
#include "tweedie.h"

#define FN(f) bl_family_name (f)

static const bl_family *const families[4] = {
  &bl_family_gaussian, &bl_family_poisson, &bl_family_gamma, &bl_family_invgauss
};
static const bl_link *const links[3] = { &bl_link_identity, &bl_link_log, &bl_link_inverse };

/* (y, mu) points with no simple relations between them; all positive so every family
   accepts them. */
enum { NPT = 5 };
static const double pt_y[NPT] = { 2.385, 0.43, 7.0, 1.05, 13.6 };
static const double pt_mu[NPT] = { 1.7, 3.1, 6.2, 0.21, 14.35 };

/* ---------------------------------------------------------------- reference */

/* Closed forms evaluated by hand (McCullagh & Nelder 1989, table 2.1 and section 2.3):
   gaussian d(3.5, 1.25) = 2.25^2 = 5.0625; poisson d(0, 2.385) = 2 mu = 4.77,
   d(2, 1) = 2 (2 log 2 - 1); gamma d(2, 1) = 2 (1 - log 2); inverse gaussian
   d(2, 1) = 1 / 2, d(0.5, 2) = 2.25 / 2 = 1.125. */
START_TEST (family_unit_dev_closed_forms)
{
  struct { const bl_family *f; double y, mu, d; const char *what; } c[] = {
    { &bl_family_gaussian, 3.5, 1.25, 5.0625, "gaussian d(3.5,1.25)" },
    { &bl_family_gaussian, -0.75, -0.75, 0.0, "gaussian d(y,y)" },
    { &bl_family_poisson, 0.0, 2.385, 4.77, "poisson d(0,2.385)" },
    { &bl_family_poisson, 2.0, 1.0, 2.0 * (2.0 * M_LN2 - 1.0), "poisson d(2,1)" },
    { &bl_family_gamma, 2.0, 1.0, 2.0 * (1.0 - M_LN2), "gamma d(2,1)" },
    { &bl_family_gamma, 4.2, 4.2, 0.0, "gamma d(y,y)" },
    { &bl_family_invgauss, 2.0, 1.0, 0.5, "inverse-gaussian d(2,1)" },
    { &bl_family_invgauss, 0.5, 2.0, 1.125, "inverse-gaussian d(0.5,2)" },
  };
  for (size_t k = 0; k < sizeof c / sizeof c[0]; k++) {
    const double d = bl_family_dev (c[k].f, c[k].y, c[k].mu, 0.0);
    ck_assert_msg (fabs (d - c[k].d) <= 1e-15 * (1.0 + fabs (c[k].d)), "%s: got %.17g, want "
                   "%.17g", c[k].what, d, c[k].d);
  }
}
END_TEST

typedef struct qparam { const bl_family *f; double y; } qparam;

static double
quasi_integrand (double t, void *vp)
{
  const qparam *q = vp;
  return (q->y - t) / bl_family_var (q->f, t, 0.0);
}

/* d(y, mu) = 2 int_mu^y (y - t) / V(t) dt (McCullagh & Nelder 1989, section 2.3 and
   section 9.2.2, the quasi-likelihood form of the deviance), integrated by GSL's adaptive
   Gauss-Kronrod rule. */
START_TEST (family_unit_dev_integral)
{
  gsl_integration_workspace *w = gsl_integration_workspace_alloc (200);
  for (size_t k = 0; k < 4; k++) {
    for (size_t i = 0; i < NPT; i++) {
      qparam q = { families[k], pt_y[i] };
      gsl_function fn = { quasi_integrand, &q };
      double v, abserr, d;
      int st = gsl_integration_qag (&fn, pt_mu[i], pt_y[i], 0.0, 1e-13, 200, GSL_INTEG_GAUSS61,
                                    w, &v, &abserr);
      ck_assert_msg (st == GSL_SUCCESS, "%s point %zu: quadrature status %d", FN (families[k]),
                     i, st);
      d = bl_family_dev (families[k], pt_y[i], pt_mu[i], 0.0);
      ck_assert_msg (fabs (d - 2.0 * v) <= 1e-11 * (fabs (d) + 1e-3), "%s d(%g,%g): %.17g vs "
                     "integral %.17g", FN (families[k]), pt_y[i], pt_mu[i], d, 2.0 * v);
      ck_assert_msg (d > 0.0, "%s d(%g,%g) = %g not > 0", FN (families[k]), pt_y[i], pt_mu[i],
                     d);
    }
  }
  /* poisson at y = 0: the integrand is -1, so d = 2 mu */
  for (size_t i = 0; i < NPT; i++) {
    const double d = bl_family_dev (&bl_family_poisson, 0.0, pt_mu[i], 0.0);
    ck_assert_msg (fabs (d - 2.0 * pt_mu[i]) <= 1e-15 * d, "poisson d(0,%g) = %.17g",
                   pt_mu[i], d);
  }
  gsl_integration_workspace_free (w);
}
END_TEST

/* Log density of family K by GSL (or Chhikara & Folks 1989, eq. 2.1, for the inverse
   gaussian), at mean MU, prior weight A, dispersion PHI.  Row dispersion phi / a. */
static double
gsl_logpdf (size_t k, double y, double mu, double a, double phi)
{
  switch (k) {
  case 0:
    return log (gsl_ran_gaussian_pdf (y - mu, sqrt (phi / a)));
  case 1:   /* prior weights multiply the log-likelihood (family.h) */
    return a * log (gsl_ran_poisson_pdf ((unsigned) y, mu));
  case 2: {
    const double nu = a / phi;   /* shape; scale mu / nu gives mean mu */
    return log (gsl_ran_gamma_pdf (y, nu, mu / nu));
  }
  default: {
    const double lam = a / phi;
    return 0.5 * log (lam / (2.0 * M_PI * y * y * y))
           - lam * (y - mu) * (y - mu) / (2.0 * mu * mu * y);
  }
  }
}

/* logpdf against GSL's densities, with unequal prior weights (integer y for poisson). */
START_TEST (family_logpdf_gsl)
{
  const double a[NPT] = { 1.0, 0.63, 1.87, 2.5, 0.915 };
  const double phi[4] = { 1.913, 1.0, 0.437, 0.0721 };
  const double ycount[NPT] = { 0, 3, 7, 1, 12 };
  for (size_t k = 0; k < 4; k++)
    for (size_t i = 0; i < NPT; i++) {
      const double y = k == 1 ? ycount[i] : pt_y[i];
      const double l = bl_family_logpdf (families[k], y, pt_mu[i], a[i], phi[k], 0.0);
      const double r = gsl_logpdf (k, y, pt_mu[i], a[i], phi[k]);
      ck_assert_msg (fabs (l - r) <= 1e-12 * (1.0 + fabs (r)), "%s logpdf(%g,%g,a=%g): %.17g "
                     "vs gsl %.17g", FN (families[k]), y, pt_mu[i], a[i], l, r);
    }
}
END_TEST

/* d = 2 phi [l(y; y) - l(y; mu)] with GSL's densities (McCullagh & Nelder 1989, sec. 2.3). */
START_TEST (family_unit_dev_likelihood_ratio)
{
  const double phi[4] = { 2.63, 1.0, 0.318, 0.0457 };
  const double ycount[NPT] = { 2, 0, 7, 1, 14 };
  for (size_t k = 0; k < 4; k++)
    for (size_t i = 0; i < NPT; i++) {
      const double y = k == 1 ? ycount[i] : pt_y[i];
      const double l1 = gsl_logpdf (k, y, y == 0.0 ? 1e-300 : y, 1.0, phi[k]);
      const double l0 = gsl_logpdf (k, y, pt_mu[i], 1.0, phi[k]);
      const double want = 2.0 * phi[k] * (l1 - l0);
      const double d = bl_family_dev (families[k], y, pt_mu[i], 0.0);
      ck_assert_msg (fabs (d - want) <= 1e-11 * (1.0 + fabs (l1) + fabs (l0)), "%s d(%g,%g): "
                     "%.17g vs likelihood ratio %.17g", FN (families[k]), y, pt_mu[i], d, want);
    }
}
END_TEST

/* ---------------------------------------------------------------- identities */

/* V(mu) from McCullagh & Nelder 1989, table 2.1: 1, mu, mu^2, mu^3; and the curvature of the
   deviance at its minimum, d''(mu)|_{mu=y} = 2 / V(y) (from memory; differentiate the
   integral form twice), by a central second difference. */
START_TEST (family_variance)
{
  for (size_t i = 0; i < NPT; i++) {
    const double m = pt_mu[i];
    const double want[4] = { 1.0, m, m * m, m * m * m };
    for (size_t k = 0; k < 4; k++) {
      const double v = bl_family_var (families[k], m, 0.0);
      const double y = pt_y[i], h = 1e-4 * y;
      const bl_family *f = families[k];
      const double d2 = (bl_family_dev (f, y, y + h, 0.0) - 2.0 * bl_family_dev (f, y, y, 0.0)
                         + bl_family_dev (f, y, y - h, 0.0)) / (h * h);
      ck_assert_msg (fabs (v - want[k]) <= 1e-15 * want[k], "%s V(%g) = %.17g", FN (f), m, v);
      const double two_v = 2.0 / bl_family_var (f, y, 0.0);
      ck_assert_msg (fabs (d2 - two_v) <= 1e-5 * two_v, "%s d''(y=%g) = %.10g, 2/V = %.10g",
                     FN (f), y, d2, two_v);
    }
  }
}
END_TEST

/* The sqrt link (for counts): the same identities, and its range eta > 0. */
START_TEST (link_sqrt)
{
  const double eta[4] = { 0.083, 1.7, 12.5, 3.61 };
  const bl_link *k = &bl_link_sqrt;
  ck_assert_ptr_eq (bl_link_find ("sqrt"), &bl_link_sqrt);
  for (size_t i = 0; i < 4; i++) {
    const double e = eta[i], h = 1e-5 * e;
    const double fd = (k->ginv (e + h) - k->ginv (e - h)) / (2.0 * h);
    ck_assert_msg (fabs (k->g (k->ginv (e)) - e) <= 1e-15 * e, "sqrt g(ginv(%g))", e);
    ck_assert_msg (fabs (k->dmu_deta (e) - fd) <= 1e-8 * fabs (fd), "sqrt dmu/deta(%g)", e);
    ck_assert (k->valid_eta (e));
  }
  ck_assert (!k->valid_eta (0.0));
  ck_assert (!k->valid_eta (-0.5));
  ck_assert (!k->valid_eta (NAN));
}
END_TEST

/* g(g^-1(eta)) = eta and g^-1(g(mu)) = mu; dmu/deta against a central difference of g^-1
   with step h = 1e-5 |eta| (relative error O(h^2 / eta^2); common practice, no source). */
START_TEST (link_inverse_and_derivative)
{
  const double eta[3][4] = {
    { -3.7, 0.25, 12.5, -0.0131 },
    { -5.3, 0.41, 3.9, -0.072 },
    { 0.083, 1.7, -2.2, 0.61 }
  };
  for (size_t l = 0; l < 3; l++)
    for (size_t i = 0; i < 4; i++) {
      const bl_link *k = links[l];
      const double e = eta[l][i], h = 1e-5 * fabs (e);
      const double mu = k->ginv (e), back = k->g (mu);
      const double fd = (k->ginv (e + h) - k->ginv (e - h)) / (2.0 * h);
      const double dm = k->dmu_deta (e);
      ck_assert_msg (k->valid_eta (e), "%s: eta %g not valid", k->name, e);
      ck_assert_msg (fabs (back - e) <= 2e-15 * fabs (e) + 2e-16, "%s g(ginv(%g)) = "
                     "%.17g", k->name, e, back);
      ck_assert_msg (fabs (k->ginv (k->g (mu)) - mu) <= 2e-15 * fabs (mu), "%s ginv(g(%g))",
                     k->name, mu);
      ck_assert_msg (fabs (dm - fd) <= 1e-8 * fabs (dm), "%s dmu/deta(%g) = %.15g, central "
                     "difference %.15g", k->name, e, dm, fd);
    }
}
END_TEST

/* Gamma dispersion MLE: nu = 1/phi solves sum a [log(nu a) - psi(nu a)] = D/2 (McCullagh &
   Nelder 1989, section 8.3), checked by evaluating the left side with gsl_sf_psi; for a
   deviance giving a large shape, a small one, unit weights (a = NULL) and unequal weights. */
static void
check_gamma_phi (const double *a, size_t n, double dev, const char *what)
{
  double phi = NAN, nu, s = 0.0;
  bl_err err = { 0 };
  int st = bl_family_phi_ml (&bl_family_gamma, NULL, NULL, a, n, dev, &phi, &err);
  ck_assert_msg (st == BL_OK, "%s: status %d (%s)", what, st, err.msg);
  ck_assert_msg (phi > 0.0 && isfinite (phi), "%s: phi = %g", what, phi);
  nu = 1.0 / phi;
  for (size_t i = 0; i < n; i++) {
    const double ai = a ? a[i] : 1.0;
    s += ai * (log (nu * ai) - gsl_sf_psi (nu * ai));
  }
  ck_assert_msg (fabs (s - dev / 2.0) <= 1e-10 * dev / 2.0, "%s: score sum %.17g, D/2 = "
                 "%.17g (phi %.17g)", what, s, dev / 2.0, phi);
}

START_TEST (family_gamma_phi_ml)
{
  const double a[7] = { 1.25, 0.62, 2.31, 0.97, 1.83, 0.5, 1.4 };
  check_gamma_phi (a, 7, 3.817, "weighted, moderate D");
  check_gamma_phi (a, 7, 0.00231, "weighted, shape large");
  check_gamma_phi (a, 7, 41.9, "weighted, shape small");
  check_gamma_phi (NULL, 7, 3.817, "unit weights");
  check_gamma_phi (NULL, 1, 0.4813, "one row");
}
END_TEST

/* gaussian and inverse gaussian: phi = D / n, n the number of rows (family.h); poisson: 1. */
START_TEST (family_phi_ml_closed_forms)
{
  const double a[3] = { 1.5, 0.25, 2.0 };
  double phi;
  bl_err err = { 0 };
  ck_assert_int_eq (bl_family_phi_ml (&bl_family_gaussian, NULL, NULL, a, 3, 7.35, &phi, &err),
                    BL_OK);
  ck_assert_msg (phi == 7.35 / 3.0, "gaussian phi = %.17g", phi);
  ck_assert_int_eq (bl_family_phi_ml (&bl_family_invgauss, NULL, NULL, NULL, 3, 0.291, &phi,
                                      &err), BL_OK);
  ck_assert_msg (phi == 0.291 / 3.0, "inverse-gaussian phi = %.17g", phi);
  phi = 0.0;
  ck_assert_int_eq (bl_family_phi_ml (&bl_family_poisson, NULL, NULL, a, 3, 5.2, &phi, &err),
                    BL_OK);
  ck_assert_msg (phi == 1.0, "poisson phi = %.17g", phi);
}
END_TEST

/* bl_family_loglik = sum of logpdf over rows, a = NULL meaning unit weights. */
START_TEST (family_loglik_sum)
{
  const double y[NPT] = { 2.385, 0.43, 7.0, 1.05, 13.6 };
  const double a[NPT] = { 1.0, 0.63, 1.87, 2.5, 0.915 };
  for (size_t k = 0; k < 4; k++) {
    const double *yy = y;
    const double yc[NPT] = { 2, 0, 7, 1, 14 };
    double s = 0.0, s1 = 0.0, l, l1;
    if (k == 1)
      yy = yc;
    for (size_t i = 0; i < NPT; i++) {
      s += gsl_logpdf (k, yy[i], pt_mu[i], a[i], 0.613);
      s1 += gsl_logpdf (k, yy[i], pt_mu[i], 1.0, 0.613);
    }
    l = bl_family_loglik (families[k], yy, pt_mu, a, NPT, 0.613);
    l1 = bl_family_loglik (families[k], yy, pt_mu, NULL, NPT, 0.613);
    ck_assert_msg (fabs (l - s) <= 1e-12 * fabs (s), "%s weighted loglik %.17g vs %.17g",
                   FN (families[k]), l, s);
    ck_assert_msg (fabs (l1 - s1) <= 1e-12 * fabs (s1), "%s unit loglik %.17g vs %.17g",
                   FN (families[k]), l1, s1);
  }
}
END_TEST

/* ---------------------------------------------------------------- errors */

/* D = 0: the dispersion MLE is 0 (a perfect fit); BL_EDATA naming the family, phi unchanged. */
START_TEST (family_phi_ml_zero_deviance)
{
  for (size_t k = 0; k < 4; k++) {
    double phi = 123.0;
    bl_err err = { 0 };
    const int st = bl_family_phi_ml (families[k], NULL, NULL, NULL, 5, 0.0, &phi, &err);
    if (k == 1) {   /* poisson: the dispersion is fixed at 1 */
      ck_assert_msg (st == BL_OK && phi == 1.0, "poisson D=0: status %d phi %g", st, phi);
      continue;
    }
    ck_assert_msg (st == BL_EDATA, "%s D=0: status %d", FN (families[k]), st);
    ck_assert_msg (err.code == BL_EDATA, "%s D=0: err.code %d", FN (families[k]), err.code);
    ck_assert_msg (strcmp (err.where, FN (families[k])) == 0, "%s D=0: where '%s'",
                   FN (families[k]), err.where);
    ck_assert_msg (strstr (err.msg, "perfect fit") != NULL, "%s D=0: msg '%s'",
                   FN (families[k]), err.msg);
    ck_assert_msg (phi == 123.0, "%s D=0: phi changed to %g", FN (families[k]), phi);
  }
}
END_TEST

/* Unknown names give NULL. */
START_TEST (family_find_unknown)
{
  ck_assert_ptr_null (bl_family_find ("poison"));
  ck_assert_ptr_null (bl_family_find (""));
  ck_assert_ptr_null (bl_family_find ("Gamma"));
  ck_assert_ptr_null (bl_family_find ("inverse_gaussian"));
  ck_assert_ptr_null (bl_link_find ("logit"));
  ck_assert_ptr_null (bl_link_find (""));
  ck_assert_ptr_null (bl_link_find ("Log"));
}
END_TEST

/* ---------------------------------------------------------------- basics */

START_TEST (family_find_names)
{
  const char *fn[4] = { "gaussian", "poisson", "gamma", "inverse-gaussian" };
  const char *ln[3] = { "identity", "log", "inverse" };
  for (size_t k = 0; k < 4; k++) {
    ck_assert_msg (bl_family_find (fn[k]) == families[k], "bl_family_find '%s'", fn[k]);
    ck_assert_str_eq (FN (families[k]), fn[k]);
  }
  for (size_t l = 0; l < 3; l++) {
    ck_assert_msg (bl_link_find (ln[l]) == links[l], "bl_link_find '%s'", ln[l]);
    ck_assert_str_eq (links[l]->name, ln[l]);
  }
}
END_TEST

/* Descriptor flags, supports and default links (family.h). */
START_TEST (family_descriptors)
{
  ck_assert_ptr_eq (bl_family_default_link (&bl_family_gaussian), &bl_link_identity);
  ck_assert_ptr_eq (bl_family_default_link (&bl_family_poisson), &bl_link_log);
  ck_assert_ptr_eq (bl_family_default_link (&bl_family_gamma), &bl_link_inverse);
  ck_assert_ptr_eq (bl_family_default_link (&bl_family_invgauss), &bl_link_log);
  ck_assert_int_eq (bl_family_has (&bl_family_gaussian, BL_FAM_PHI_FREE), 1);
  ck_assert_int_eq (bl_family_has (&bl_family_poisson, BL_FAM_PHI_FREE), 0);
  ck_assert_int_eq (bl_family_has (&bl_family_gamma, BL_FAM_PHI_FREE), 1);
  ck_assert_int_eq (bl_family_has (&bl_family_invgauss, BL_FAM_PHI_FREE), 1);
  ck_assert_int_eq (bl_family_has (&bl_family_poisson, BL_FAM_DISCRETE), 1);
  ck_assert_int_eq (bl_family_has (&bl_family_gamma, BL_FAM_DISCRETE), 0);
  ck_assert_str_eq (bl_family_support (&bl_family_gaussian), "any real y");
  ck_assert_str_eq (bl_family_support (&bl_family_poisson), "y >= 0");
  ck_assert_str_eq (bl_family_support (&bl_family_gamma), "y > 0");
  ck_assert_str_eq (bl_family_support (&bl_family_invgauss), "y > 0");
}
END_TEST

/* Supports and mean spaces, including the edges; starting means lie in the mean space. */
START_TEST (family_valid_ranges)
{
  const double ys[] = { -2.5, 0.0, 1e-300, 0.37, 4.0, 1e300 };
  /* expected y_ok per family for ys[] */
  const int ok[4][6] = {
    { 1, 1, 1, 1, 1, 1 }, { 0, 1, 1, 1, 1, 1 }, { 0, 0, 1, 1, 1, 1 }, { 0, 0, 1, 1, 1, 1 }
  };
  for (size_t k = 0; k < 4; k++) {
    const bl_family *f = families[k];
    ck_assert_msg (!bl_family_y_ok (f, NAN) && !bl_family_y_ok (f, INFINITY)
                   && !bl_family_y_ok (f, -INFINITY), "%s y_ok "
                   "non-finite", FN (f));
    ck_assert_msg (!bl_family_mu_ok (f, NAN) && !bl_family_mu_ok (f, INFINITY),
                   "%s valid_mu non-finite",
                   FN (f));
    for (size_t i = 0; i < sizeof ys / sizeof ys[0]; i++) {
      ck_assert_msg (!bl_family_y_ok (f, ys[i]) == !ok[k][i], "%s y_ok(%g) = %d", FN (f), ys[i],
                     bl_family_y_ok (f, ys[i]));
      if (bl_family_y_ok (f, ys[i]) && fabs (ys[i]) < 1e10) {
        const double m = bl_family_mustart (f, ys[i], 2.17);
        ck_assert_msg (bl_family_mu_ok (f, m), "%s mustart(%g) = %g outside the mean space",
                       FN (f),
                       ys[i], m);
      }
    }
    ck_assert_msg (bl_family_mu_ok (f, 0.5), "%s valid_mu(0.5)", FN (f));
    ck_assert_msg (!bl_family_mu_ok (f, 0.0) == (k != 0), "%s valid_mu(0)", FN (f));
    ck_assert_msg (!bl_family_mu_ok (f, -1.0) == (k != 0), "%s valid_mu(-1)", FN (f));
  }
  /* links: log keeps exp(eta) finite and nonzero; inverse excludes eta = 0 */
  ck_assert (bl_link_identity.valid_eta (-1e300));
  ck_assert (!bl_link_identity.valid_eta (NAN));
  ck_assert (!bl_link_identity.valid_eta (INFINITY));
  ck_assert (bl_link_log.valid_eta (0.0));
  ck_assert (bl_link_log.valid_eta (700.0));
  ck_assert (!bl_link_log.valid_eta (710.0));
  ck_assert (!bl_link_log.valid_eta (-750.0));
  ck_assert (!bl_link_log.valid_eta (NAN));
  ck_assert (isfinite (bl_link_log.ginv (708.9)) && bl_link_log.ginv (-707.9) > 0.0);
  ck_assert (bl_link_inverse.valid_eta (-0.5));
  ck_assert (bl_link_inverse.valid_eta (1e-100));
  ck_assert (!bl_link_inverse.valid_eta (0.0));
  ck_assert (!bl_link_inverse.valid_eta (1e-200));
  ck_assert (!bl_link_inverse.valid_eta (-INFINITY));
  ck_assert (isfinite (bl_link_inverse.dmu_deta (1e-140)));
}
END_TEST

/* ---------------------------------------------------------------- CDF and quantile hooks */

static const bl_family *const all6[6] = {
  &bl_family_gaussian, &bl_family_poisson, &bl_family_gamma, &bl_family_invgauss,
  &bl_family_negbin, &bl_family_tweedie
};

/* The continuous CDFs against GSL's own distribution functions: gaussian
   gsl_cdf_gaussian_P(y - mu, sqrt(phi / a)), gamma gsl_cdf_gamma_P(y, a / phi, mu phi / a)
   (both scale roundings). */
START_TEST (family_cdf_gsl)
{
  const double a[NPT] = { 1.0, 0.63, 1.87, 2.5, 0.915 };
  const double phi = 0.437;
  for (size_t i = 0; i < NPT; i++) {
    const double y = pt_y[i], mu = pt_mu[i];
    const double g = gsl_cdf_gaussian_P (y - mu, sqrt (phi / a[i]));
    const double gm = gsl_cdf_gamma_P (y, a[i] / phi, mu * phi / a[i]);
    const double f0 = bl_family_cdf (&bl_family_gaussian, y, mu, a[i], phi, 0.0,
                                     BL_FAM_SCALE_MUL);
    const double f1 = bl_family_cdf (&bl_family_gamma, y, mu, a[i], phi, 0.0,
                                     BL_FAM_SCALE_MUL);
    const double f2 = bl_family_cdf (&bl_family_gamma, y, mu, a[i], phi, 0.0,
                                     BL_FAM_SCALE_DIV);
    ck_assert_msg (f0 == g, "gaussian F(%g) %.17g, gsl %.17g", y, f0, g);
    ck_assert_msg (f1 == gm, "gamma F(%g) %.17g, gsl %.17g", y, f1, gm);
    ck_assert_msg (fabs (f2 - gm) <= 1e-14, "gamma F(%g) mu/shape %.17g, gsl %.17g", y, f2, gm);
  }
  ck_assert (bl_family_cdf (&bl_family_gamma, 0.0, 1.0, 1.0, 0.5, 0.0, BL_FAM_SCALE_MUL) == 0.0);
  ck_assert (bl_family_cdf (&bl_family_invgauss, -1.0, 1.0, 1.0, 0.5, 0.0, BL_FAM_SCALE_MUL)
             == 0.0);
}
END_TEST

/* Chhikara & Folks (1989) inverse gaussian density, integrated from 0 to y by GSL's adaptive
   quadrature, against the CDF hook (eq. 2.3). */
typedef struct igp { double mu, lam; } igp;
static double
ig_density (double x, void *vp)
{
  const igp *q = vp;
  if (!(x > 0.0))
    return 0.0;
  return sqrt (q->lam / (2.0 * M_PI * x * x * x))
         * exp (-q->lam * (x - q->mu) * (x - q->mu) / (2.0 * q->mu * q->mu * x));
}

START_TEST (family_cdf_invgauss_integral)
{
  gsl_integration_workspace *w = gsl_integration_workspace_alloc (200);
  const double a = 1.37, phi[3] = { 0.0721, 0.613, 2.85 };
  for (size_t k = 0; k < 3; k++)
    for (size_t i = 0; i < NPT; i++) {
      igp q = { pt_mu[i], a / phi[k] };
      gsl_function fn = { ig_density, &q };
      double v, abserr;
      const double F = bl_family_cdf (&bl_family_invgauss, pt_y[i], pt_mu[i], a, phi[k], 0.0,
                                      BL_FAM_SCALE_MUL);
      ck_assert_int_eq (gsl_integration_qags (&fn, 0.0, pt_y[i], 1e-14, 1e-12, 200, w, &v,
                                              &abserr), GSL_SUCCESS);
      ck_assert_msg (fabs (F - v) <= 1e-9, "ig F(%g; mu %g, lambda %g) = %.17g, integral "
                     "%.17g", pt_y[i], pt_mu[i], q.lam, F, v);
    }
  gsl_integration_workspace_free (w);
}
END_TEST

/* The discrete CDFs against the summed probabilities: gsl_ran_poisson_pdf and
   gsl_ran_negative_binomial_pdf (NB(theta, theta / (theta + mu))), and the family's own
   exp(logpdf); 0 below 0. */
START_TEST (family_cdf_discrete_sum)
{
  const double mus[3] = { 0.37, 4.26, 23.9 }, th = 2.713;
  for (size_t m = 0; m < 3; m++) {
    long double sp = 0.0L, sn = 0.0L, lp = 0.0L, ln = 0.0L;
    const double mu = mus[m], pr = th / (th + mu);
    for (unsigned k = 0; k <= 60; k++) {
      const double y = (double) k;
      double fp, fn;
      sp += gsl_ran_poisson_pdf (k, mu);
      sn += gsl_ran_negative_binomial_pdf (k, pr, th);
      lp += exp (bl_family_logpdf (&bl_family_poisson, y, mu, 1.0, 1.0, 0.0));
      ln += exp (bl_family_logpdf (&bl_family_negbin, y, mu, 1.0, 1.0, th));
      fp = bl_family_cdf (&bl_family_poisson, y, mu, 1.0, 1.0, 0.0, BL_FAM_SCALE_MUL);
      fn = bl_family_cdf (&bl_family_negbin, y, mu, 1.0, 1.0, th, BL_FAM_SCALE_MUL);
      ck_assert_msg (fabs (fp - (double) sp) <= 1e-13 && fabs (fp - (double) lp) <= 1e-12,
                     "poisson F(%u; %g) %.17g, sum %.17g", k, mu, fp, (double) sp);
      ck_assert_msg (fabs (fn - (double) sn) <= 1e-13 && fabs (fn - (double) ln) <= 1e-12,
                     "negbin F(%u; %g) %.17g, sum %.17g", k, mu, fn, (double) sn);
    }
    ck_assert (bl_family_cdf (&bl_family_poisson, -1.0, mu, 1.0, 1.0, 0.0, 0) == 0.0);
    ck_assert (bl_family_cdf (&bl_family_negbin, -1.0, mu, 1.0, 1.0, th, 0) == 0.0);
  }
}
END_TEST

/* The Tweedie CDF (compound sum, Jorgensen 1997) against the series density of Dunn & Smyth
   (2005): P(Y = 0) plus the density integrated over (0, y] by GSL's quadrature. */
typedef struct twp { double mu, phi, p; } twp;
static double
tw_density (double x, void *vp)
{
  const twp *q = vp;
  return exp (bl_family_logpdf (&bl_family_tweedie, x, q->mu, 1.0, q->phi, q->p));
}

START_TEST (family_cdf_tweedie_integral)
{
  gsl_integration_workspace *w = gsl_integration_workspace_alloc (400);
  const twp cases[3] = { { 1.7, 0.83, 1.37 }, { 3.1, 1.92, 1.61 }, { 0.62, 0.41, 1.18 } };
  const double ys[3] = { 0.43, 2.385, 5.9 };
  for (size_t k = 0; k < 3; k++)
    for (size_t i = 0; i < 3; i++) {
      twp q = cases[k];
      gsl_function fn = { tw_density, &q };
      double v, abserr;
      const double p0 = exp (bl_family_logpdf (&bl_family_tweedie, 0.0, q.mu, 1.0, q.phi, q.p));
      const double F = bl_family_cdf (&bl_family_tweedie, ys[i], q.mu, 1.0, q.phi, q.p, 0);
      ck_assert_int_eq (gsl_integration_qags (&fn, 0.0, ys[i], 1e-13, 1e-11, 400, w, &v,
                                              &abserr), GSL_SUCCESS);
      ck_assert_msg (fabs (F - (p0 + v)) <= 1e-8, "tweedie F(%g; %g, %g, %g) = %.17g, mass + "
                     "integral %.17g", ys[i], q.mu, q.phi, q.p, F, p0 + v);
      ck_assert_msg (fabs (bl_family_cdf (&bl_family_tweedie, 0.0, q.mu, 1.0, q.phi, q.p, 0)
                           - p0) <= 1e-15, "tweedie P(Y = 0)");
    }
  gsl_integration_workspace_free (w);
}
END_TEST

/* Quantile/CDF round trips over a grid of levels and rows: F(q - 1) < p <= F(q) for the
   discrete families (the quantile's definition), |F(q) - p| small for the continuous ones,
   and q = 0 exactly when p <= P(Y = 0) for the Tweedie. */
START_TEST (family_quantile_round_trip)
{
  const double ps[7] = { 1e-6, 0.025, 0.2718, 0.5, 0.8413, 0.975, 1.0 - 1e-7 };
  const double mus[3] = { 0.37, 4.26, 23.9 }, as[2] = { 1.0, 2.31 };
  const double phis[6] = { 1.913, 1.0, 0.437, 0.0721, 1.0, 1.27 };
  const double pars[6] = { 0.0, 0.0, 0.0, 0.0, 2.713, 1.43 };
  for (size_t f = 0; f < 6; f++)
    for (size_t m = 0; m < 3; m++)
      for (size_t j = 0; j < 2; j++)
        for (size_t k = 0; k < 7; k++) {
          const bl_family *fam = all6[f];
          const double mu = mus[m], a = as[j], phi = phis[f], par = pars[f], p = ps[k];
          const double q = bl_family_quantile (fam, p, mu, a, phi, par);
          const double Fq = bl_family_cdf (fam, q, mu, a, phi, par, BL_FAM_SCALE_MUL);
          if (bl_family_has (fam, BL_FAM_DISCRETE)) {
            const double F1 = q >= 1.0 ? bl_family_cdf (fam, q - 1.0, mu, a, phi, par, 0) : 0.0;
            ck_assert_msg (q == floor (q) && F1 < p && p <= Fq, "%s q(%g; %g) = %g: F(q-1) "
                           "%.17g, F(q) %.17g", FN (fam), p, mu, q, F1, Fq);
          } else if (bl_family_has (fam, BL_FAM_ZERO_MASS) && q == 0.0) {
            ck_assert_msg (p <= Fq, "%s q(%g) = 0 above the mass %.17g", FN (fam), p, Fq);
          } else {
            ck_assert_msg (fabs (Fq - p) <= 1e-9 * (p < 0.5 ? 1.0 : 1.0) + 1e-12,
                           "%s q(%g; mu %g, a %g) = %.17g: F(q) = %.17g", FN (fam), p, mu, a,
                           q, Fq);
          }
        }
  ck_assert (bl_family_quantile (&bl_family_poisson, 1.0, 3.0, 1.0, 1.0, 0.0) == HUGE_VAL);
  ck_assert (bl_family_quantile (&bl_family_negbin, 1.0, 3.0, 1.0, 1.0, 2.0) == HUGE_VAL);
}
END_TEST

/* ---- the reference: the prediction-interval quantiles exactly as src/lib/model.c computed
   them before the hook existed (copied here unchanged, so that model.c's switch to the hook
   keeps its numbers bit for bit). */
static double
ref_discrete_quantile (double p, double k0, double (*cdf) (unsigned k, const double *par),
                       const double *par)
{
  const double kmax = (double) UINT_MAX / 2.0;
  double lo, hi, step = 1.0;
  if (!(k0 >= 0.0))
    k0 = 0.0;
  if (k0 > kmax)
    k0 = kmax;
  k0 = floor (k0);
  if (cdf ((unsigned) k0, par) >= p) {
    hi = k0;
    lo = k0 - step;
    while (lo >= 0.0 && cdf ((unsigned) lo, par) >= p) {
      hi = lo;
      step *= 2.0;
      lo = hi - step;
    }
    if (lo < 0.0)
      lo = -1.0;
  } else {
    lo = k0;
    hi = k0 + step;
    while (cdf ((unsigned) hi, par) < p) {
      if (hi >= kmax)
        return HUGE_VAL;
      lo = hi;
      step *= 2.0;
      hi = lo + step < kmax ? lo + step : kmax;
    }
  }
  while (hi - lo > 1.0) {
    const double mid = floor (lo + (hi - lo) / 2.0);
    if (mid >= 0.0 && cdf ((unsigned) mid, par) >= p)
      hi = mid;
    else
      lo = mid;
  }
  return hi;
}
static double ref_poi_cdf (unsigned k, const double *par) { return gsl_cdf_poisson_P (k, par[0]); }
static double
ref_nb_cdf (unsigned k, const double *par)
{
  return gsl_cdf_negative_binomial_P (k, par[0], par[1]);
}
static double
ref_poisson_quantile (double p, double mu)
{
  double k;
  if (!(p < 1.0))
    return HUGE_VAL;
  k = floor (mu + gsl_cdf_ugaussian_Pinv (p) * sqrt (mu));
  if (!(k < (double) UINT_MAX / 2.0))
    return k;
  return ref_discrete_quantile (p, k, ref_poi_cdf, &mu);
}
static double
ref_negbin_quantile (double p, double mu, double th)
{
  const double par[2] = { th / (th + mu), th };
  double k;
  if (!(p < 1.0))
    return HUGE_VAL;
  k = floor (mu + gsl_cdf_ugaussian_Pinv (p) * sqrt (mu + mu * mu / th));
  if (!(k < (double) UINT_MAX / 2.0))
    return k;
  return ref_discrete_quantile (p, k, ref_nb_cdf, par);
}
static double
ref_invgauss_cdf (double x, double mu, double lambda)
{
  const double r = sqrt (lambda / x);
  const double z1 = r * (x / mu - 1.0), z2 = r * (x / mu + 1.0);
  if (x <= 0.0)
    return 0.0;
  return gsl_cdf_ugaussian_P (z1)
         + exp (2.0 * lambda / mu + gsl_sf_log_erfc (z2 / M_SQRT2) - M_LN2);
}
static double
ref_invgauss_quantile (double p, double mu, double lambda)
{
  double lo = 0.0, hi = mu;
  for (int k = 0; k < 2000 && ref_invgauss_cdf (hi, mu, lambda) < p; k++) {
    lo = hi;
    hi *= 2.0;
  }
  for (int k = 0; k < 400 && hi - lo > 4.0 * DBL_EPSILON * hi; k++) {
    const double mid = 0.5 * (lo + hi);
    if (ref_invgauss_cdf (mid, mu, lambda) < p)
      lo = mid;
    else
      hi = mid;
  }
  return 0.5 * (lo + hi);
}

/* model.c's glm_pred_interval quantile for family F at (mu, a, phi_ml, par). */
static double
ref_model_quantile (size_t f, double p, double mu, double a, double phi, double par)
{
  switch (f) {
  case 1: return ref_poisson_quantile (p, mu);
  case 2: return gsl_cdf_gamma_Pinv (p, a / phi, mu * phi / a);
  case 3: return ref_invgauss_quantile (p, mu, a / phi);
  case 4: return ref_negbin_quantile (p, mu, par);
  default: return bl_tweedie_quantile (p, mu, phi / a, par);
  }
}

START_TEST (family_quantile_model_reference)
{
  const double ps[6] = { 0.005, 0.025, 0.05, 0.95, 0.975, 0.995 };
  const double mus[4] = { 0.0371, 1.7, 42.6, 3.9e5 }, as[2] = { 1.0, 0.683 };
  const double phis[6] = { 1.0, 1.0, 0.437, 0.0721, 1.0, 1.27 };
  const double pars[6] = { 0.0, 0.0, 0.0, 0.0, 2.713, 1.43 };
  for (size_t f = 1; f < 6; f++)
    for (size_t m = 0; m < 4; m++)
      for (size_t j = 0; j < 2; j++)
        for (size_t k = 0; k < 6; k++) {
          double q, r;
          if (f == 5 && m == 3)
            continue;                    /* the Tweedie CDF sum is too long at this mean */
          q = bl_family_quantile (all6[f], ps[k], mus[m], as[j], phis[f], pars[f]);
          r = ref_model_quantile (f, ps[k], mus[m], as[j], phis[f], pars[f]);
          ck_assert_msg (q == r || (isnan (q) && isnan (r)), "%s q(%g; mu %g, a %g) = %.17g, "
                         "model.c %.17g", FN (all6[f]), ps[k], mus[m], as[j], q, r);
        }
}
END_TEST

/* ---------------------------------------------------------------- the table and properties */

START_TEST (family_table)
{
  static const char *const names[6] = { "gaussian", "poisson", "gamma", "inverse-gaussian",
                                        "negative-binomial", "tweedie" };
  const char *all = "gaussian|poisson|gamma|inverse-gaussian|negative-binomial|tweedie";
  char buf[128], small[12];
  ck_assert_uint_eq (bl_family_count (), 6);
  for (size_t i = 0; i < 6; i++) {
    ck_assert_ptr_eq (bl_family_at (i), all6[i]);
    ck_assert_ptr_eq (bl_family_find (names[i]), all6[i]);
    ck_assert_str_eq (bl_family_name (all6[i]), names[i]);
  }
  ck_assert_ptr_null (bl_family_at (6));
  ck_assert_uint_eq (bl_family_names (buf, sizeof buf, "|"), strlen (all));
  ck_assert_str_eq (buf, all);
  ck_assert_uint_eq (bl_family_names (small, sizeof small, "|"), strlen (all));
  ck_assert_str_eq (small, "gaussian|po");
  ck_assert_uint_eq (bl_family_names (NULL, 0, ", "), strlen (all) + 5);
}
END_TEST

/* The properties, as family.h documents them, and the support texts against the support
   test: the complement's text names a y the test refuses. */
START_TEST (family_properties)
{
  const unsigned flags[6] = {
    BL_FAM_PHI_FREE | BL_FAM_NORMAL, BL_FAM_DISCRETE | BL_FAM_OVERDISP | BL_FAM_ZERO_GROUP,
    BL_FAM_PHI_FREE, BL_FAM_PHI_FREE, BL_FAM_DISCRETE,
    BL_FAM_PHI_FREE | BL_FAM_ZERO_MASS | BL_FAM_CDF_PHI_ML
  };
  const bl_family_par kinds[6] = { BL_FAMPAR_NONE, BL_FAMPAR_NONE, BL_FAMPAR_NONE,
                                   BL_FAMPAR_NONE, BL_FAMPAR_THETA, BL_FAMPAR_POWER };
  const double powers[4] = { 0.0, 1.0, 2.0, 3.0 };
  for (size_t f = 0; f < 6; f++) {
    const bl_family *fam = all6[f];
    const char *out = bl_family_outside (fam);
    for (unsigned b = 0; b < 7; b++)
      ck_assert_msg (!bl_family_has (fam, 1u << b) == !(flags[f] & (1u << b)), "%s flag %u",
                     FN (fam), b);
    ck_assert_int_eq (bl_family_par_kind (fam), kinds[f]);
    ck_assert_msg (!bl_family_par_name (fam) == (kinds[f] == BL_FAMPAR_NONE), "%s par_name",
                   FN (fam));
    if (f < 4)
      ck_assert_msg (bl_family_var_power (fam) == powers[f], "%s var power", FN (fam));
    else
      ck_assert_msg (isnan (bl_family_var_power (fam)), "%s var power", FN (fam));
    ck_assert_ptr_nonnull (bl_family_noun (fam));
    if (!out) {
      ck_assert (bl_family_y_ok (fam, -3.7) && bl_family_y_ok (fam, 0.0));
    } else if (strcmp (out, "y <= 0") == 0) {
      ck_assert_str_eq (bl_family_support (fam), "y > 0");
      ck_assert (!bl_family_y_ok (fam, 0.0) && bl_family_y_ok (fam, 1e-300));
    } else {
      ck_assert_str_eq (out, "y < 0");
      ck_assert_str_eq (bl_family_support (fam), "y >= 0");
      ck_assert (!bl_family_y_ok (fam, -1e-300) && bl_family_y_ok (fam, 0.0));
    }
    /* the transitional fields mirror the flags */
    ck_assert_int_eq (fam->phi_free, bl_family_has (fam, BL_FAM_PHI_FREE));
    ck_assert_int_eq (fam->discrete, bl_family_has (fam, BL_FAM_DISCRETE));
  }
  ck_assert_str_eq (bl_family_noun (&bl_family_negbin), "the negative binomial");
}
END_TEST

/* The gamma's unit-weight log-likelihood sum (lgamma taken out of the loop) equals the sum
   of its per-row log densities; a per-row weight enters each row alone. */
START_TEST (family_loglik_unit_weights)
{
  const double a[NPT] = { 1.0, 1.0, 1.0, 1.0, 1.0 };
  for (size_t f = 0; f < 6; f++) {
    const double phi = 0.613, par = f == 4 ? 2.713 : f == 5 ? 1.43 : 0.0;
    long double s = 0.0L;
    double l0, l1;
    for (size_t i = 0; i < NPT; i++)
      s += bl_family_logpdf (all6[f], f == 1 || f == 4 ? floor (pt_y[i]) : pt_y[i], pt_mu[i],
                             1.0, phi, par);
    {
      double yy[NPT];
      for (size_t i = 0; i < NPT; i++)
        yy[i] = f == 1 || f == 4 ? floor (pt_y[i]) : pt_y[i];
      l0 = bl_family_loglik_p (all6[f], yy, pt_mu, NULL, NPT, phi, par);
      l1 = bl_family_loglik_p (all6[f], yy, pt_mu, a, NPT, phi, par);
    }
    ck_assert_msg (fabs (l0 - (double) s) <= 1e-12 * (1.0 + fabs ((double) s)), "%s loglik "
                   "%.17g, sum %.17g", FN (all6[f]), l0, (double) s);
    ck_assert_msg (l1 == (double) s, "%s weighted loglik %.17g, sum %.17g", FN (all6[f]), l1,
                   (double) s);
  }
}
END_TEST

/* ---------------------------------------------------------------- tails in log space */

/* The largest relative error of log P accepted against tests/reference/tails.txt (mpmath at
   400 digits, SciPy as a cross-check; tests/reference/README.md).  Measured: at most
   TAILS_MEASURED over every case (printed by the test). */
#define TAILS_TOL 1e-10

/* One case of tails.txt evaluated with the library. */
static double
tails_eval (const char *kind, const char *fam, double mu, double phi, double par, double y1,
            double y2)
{
  if (strcmp (kind, "pvalue") == 0) {
    if (strcmp (fam, "chisq") == 0)
      return bl_tail_chisq_logQ (mu, phi);
    if (strcmp (fam, "f") == 0)
      return bl_tail_f_logQ (mu, phi, par);
    if (strcmp (fam, "t2") == 0)
      return bl_tail_t_logp2 (mu, phi);
    return bl_tail_t_logp2 (mu, HUGE_VAL);
  }
  {
    const bl_family *f = bl_family_find (fam);
    ck_assert_msg (f != NULL, "tails.txt: family '%s'", fam);
    if (strcmp (kind, "interval") == 0)
      return bl_family_log_interval (f, y1, y2, mu, 1.0, phi, par, BL_FAM_SCALE_MUL);
    if (strcmp (kind, "logsf") == 0)
      return bl_family_logsf (f, y1, mu, 1.0, phi, par, BL_FAM_SCALE_MUL);
    return bl_family_logcdf (f, y1, mu, 1.0, phi, par, BL_FAM_SCALE_MUL);
  }
}

/* Log interval probabilities, log tails and log p-values at 0 to 60 standard deviations
   (tests/reference/tails.py -> tails.txt: mpmath, 400 digits). */
START_TEST (family_tails_reference)
{
  char path[4096], line[512];
  FILE *fp = fopen (test_data_path ("../reference/tails.txt", path, sizeof path), "r");
  size_t ncase = 0;
  double worst = 0.0;
  ck_assert_msg (fp != NULL, "open %s", path);
  while (fgets (line, sizeof line, fp)) {
    char kind[32], fam[32];
    double mu, phi, par, y1, y2, ref, got, rel;
    if (line[0] == '#' || line[0] == '\n')
      continue;
    ck_assert_msg (sscanf (line, "%31s %31s %lf %lf %lf %lf %lf %lf", kind, fam, &mu, &phi,
                           &par, &y1, &y2, &ref) == 8, "tails.txt: bad line '%s'", line);
    got = tails_eval (kind, fam, mu, phi, par, y1, y2);
    rel = fabs (got - ref) / fabs (ref);
    ck_assert_msg (isfinite (got) && rel <= TAILS_TOL, "%s %s mu %g phi %g par %g (%.17g, "
                   "%.17g]: %.17g, reference %.17g, rel %.3g", kind, fam, mu, phi, par, y1, y2,
                   got, ref, rel);
    worst = rel > worst ? rel : worst;
    ncase++;
  }
  fclose (fp);
  ck_assert_msg (ncase >= 150, "tails.txt: %zu cases", ncase);
  fprintf (stderr, "family_tails_reference: %zu cases, largest relative error %.3g\n", ncase,
           worst);
}
END_TEST

/* log Q and its inverse: Q^-1(exp(log Q(x))) = x across the switch to the asymptotic series
   and far beyond the doubles; log Q continuous at x = 37 (the switch) to 1e-13 relative, and
   the A&S 26.2.12 leading term -x^2/2 - log x - log sqrt(2 pi) to 1/x^2 at x = 1e4. */
START_TEST (family_tails_normal_identities)
{
  const double xs[] = { -3.1, 0.0, 0.7, 5.3, 20.0, 36.999, 37.0, 41.5, 60.0, 250.0, 3000.0 };
  for (size_t i = 0; i < sizeof xs / sizeof xs[0]; i++) {
    const double lq = bl_tail_norm_logQ (xs[i]), x = bl_tail_norm_Qinv_log (lq);
    ck_assert_msg (fabs (x - xs[i]) <= 1e-12 * (1.0 + fabs (xs[i])), "Qinv(log Q(%g)) = %.17g",
                   xs[i], x);
    ck_assert_msg (fabs (bl_tail_norm_logP (xs[i]) - bl_tail_norm_logQ (-xs[i])) == 0.0,
                   "log P(%g)", xs[i]);
  }
  {
    const double a = bl_tail_norm_logQ (nextafter (37.0, 0.0)), b = bl_tail_norm_logQ (37.0);
    ck_assert_msg (fabs (a - b) <= 1e-13 * fabs (b), "log Q across 37: %.17g %.17g", a, b);
  }
  {
    const double x = 1e4, lead = -0.5 * x * x - log (x) - 0.91893853320467274;
    ck_assert_msg (fabs (bl_tail_norm_logQ (x) - lead) <= 1.01 / (x * x), "log Q(1e4)");
  }
  /* log(1 - e^x) against log1p(-exp(x)) and log(-expm1(x)) where each is exact enough */
  ck_assert (fabs (bl_tail_log1mexp (-1e-20) - log (1e-20)) < 1e-14);
  ck_assert (fabs (bl_tail_log1mexp (-50.0) + exp (-50.0)) < 1e-30);
  ck_assert (bl_tail_log1mexp (0.0) == -HUGE_VAL);
}
END_TEST

/* The upper quantile from the upper tail: at Q = 1e-20 (a level of 1 - 2e-20, which rounds
   to 1), the least k with P(Y > k) <= Q for the poisson and the negative binomial, and the
   y with log P(Y > y) = log Q for the continuous families (identities of the definition). */
START_TEST (family_tails_quantile_upper)
{
  const double q = 1e-20, lq = log (q);
  {
    const double k = bl_family_quantile_upper (&bl_family_poisson, q, 4.2, 1.0, 1.0, 0.0);
    ck_assert (isfinite (k));
    ck_assert (bl_family_logsf (&bl_family_poisson, k, 4.2, 1.0, 1.0, 0.0, 0) <= lq);
    ck_assert (bl_family_logsf (&bl_family_poisson, k - 1.0, 4.2, 1.0, 1.0, 0.0, 0) > lq);
  }
  {
    const double k = bl_family_quantile_upper (&bl_family_negbin, q, 6.3, 1.0, 1.0, 2.7);
    ck_assert (isfinite (k));
    ck_assert (bl_family_logsf (&bl_family_negbin, k, 6.3, 1.0, 1.0, 2.7, 0) <= lq);
    ck_assert (bl_family_logsf (&bl_family_negbin, k - 1.0, 6.3, 1.0, 1.0, 2.7, 0) > lq);
  }
  {
    const bl_family *fs[] = { &bl_family_gaussian, &bl_family_gamma, &bl_family_invgauss,
                              &bl_family_tweedie };
    const double par[] = { 0.0, 0.0, 0.0, 1.45 }, phi[] = { 5.29, 0.4, 0.06, 1.7 };
    for (size_t i = 0; i < 4; i++) {
      const double y = bl_family_quantile_upper (fs[i], q, 4.1, 1.0, phi[i], par[i]);
      const double l = bl_family_logsf (fs[i], y, 4.1, 1.0, phi[i], par[i], 0);
      ck_assert_msg (isfinite (y) && fabs (l - lq) <= 1e-9 * fabs (lq), "%s: y %.17g, "
                     "log S %.17g", bl_family_name (fs[i]), y, l);
    }
  }
}
END_TEST

static Suite *
family_suite (void)
{
  Suite *s = suite_create ("family");
  TCase *ref = tcase_create ("reference");
  TCase *idt = tcase_create ("identities");
  TCase *err = tcase_create ("errors");
  TCase *bas = tcase_create ("basics");
  tcase_add_test (ref, family_unit_dev_closed_forms);
  tcase_add_test (ref, family_unit_dev_integral);
  tcase_add_test (ref, family_logpdf_gsl);
  tcase_add_test (ref, family_unit_dev_likelihood_ratio);
  tcase_add_test (idt, family_variance);
  tcase_add_test (idt, link_inverse_and_derivative);
  tcase_add_test (idt, link_sqrt);
  tcase_add_test (idt, family_gamma_phi_ml);
  tcase_add_test (idt, family_phi_ml_closed_forms);
  tcase_add_test (idt, family_loglik_sum);
  tcase_add_test (err, family_phi_ml_zero_deviance);
  tcase_add_test (err, family_find_unknown);
  tcase_add_test (bas, family_find_names);
  tcase_add_test (bas, family_descriptors);
  tcase_add_test (bas, family_valid_ranges);
  tcase_add_test (ref, family_cdf_gsl);
  tcase_add_test (ref, family_cdf_invgauss_integral);
  tcase_add_test (ref, family_cdf_discrete_sum);
  tcase_add_test (ref, family_cdf_tweedie_integral);
  tcase_add_test (idt, family_quantile_round_trip);
  tcase_add_test (ref, family_quantile_model_reference);
  tcase_add_test (idt, family_loglik_unit_weights);
  tcase_add_test (bas, family_table);
  tcase_add_test (bas, family_properties);
  tcase_add_test (ref, family_tails_reference);
  tcase_add_test (idt, family_tails_normal_identities);
  tcase_add_test (idt, family_tails_quantile_upper);
  suite_add_tcase (s, ref);
  suite_add_tcase (s, idt);
  suite_add_tcase (s, err);
  suite_add_tcase (s, bas);
  return s;
}

int
main (void)
{
  return test_run_suite (family_suite (), 1);
}
