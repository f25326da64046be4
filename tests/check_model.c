/* check_model.c -- saved models (bl_model_write / bl_model_read) and prediction on new data.

   The data are an invented pump fleet, generated here with GSL's MT19937 generator and
   fixed seeds: site and duty (categorical), age (years), load (fraction), hours of running
   (exposure), stops (Poisson counts), repair (gamma hours), amount (a positive amount whose
   spread grows with its mean) and w (prior weights).

   Sources of the expected values, beside each check:
   - round trips: the fit itself (bl_fit_mu, bl_fit_backtransform), to 1e-12 relative;
   - the gaussian intervals: the textbook formulas x'b -/+ t s sqrt(x'(X'X)^-1 x) and
     x'b -/+ t s sqrt(1 + x'(X'X)^-1 x) (Draper & Smith 1998, Applied Regression Analysis,
     3rd ed., section 3.2), computed in the test by the normal equations with GSL's Cholesky
     factorization, independently of ballast's QR solver, and the t quantile from GSL;
   - the count and skewed families: the definition of a quantile checked with GSL's CDFs
     (Poisson, gamma), and for the inverse gaussian the density integrated numerically with
     GSL's QAGS routine (density: Chhikara & Folks 1989, The Inverse Gaussian Distribution,
     eq. 2.1). */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <jansson.h>
#include "alloc.h"
#include "design.h"
#include "fit.h"
#include "link.h"
#include "model.h"
#include "table.h"
#include "terms.h"
#include "testutil.h"

static const char *const sites[] = { "east-wharf", "kiln-road", "mill-lane", "north-quay" };
static const char *const duties[] = { "heavy", "light", "standard" };

/* N rows of the pump fleet from SEED (caller frees). */
static char *
pump_csv (size_t n, unsigned long seed)
{
  static const double site_s[] = { 0.0, 0.31, -0.22, 0.47 }, site_r[] = { 0.0, -0.14, 0.26,
                                                                           0.09 };
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  test_buf b = { NULL, 0, 0 };
  gsl_rng_set (r, seed);
  test_buf_printf (&b, "site,duty,age,load,hours,stops,repair,amount,w\n");
  for (size_t i = 0; i < n; i++) {
    const size_t s = i < 4 ? i : gsl_rng_uniform_int (r, 4), du = gsl_rng_uniform_int (r, 3);
    const double age = 0.5 + 14.0 * gsl_rng_uniform (r);
    const double load = 0.3 + 0.65 * gsl_rng_uniform (r);
    const double hours = 200.0 + 900.0 * gsl_rng_uniform (r);
    const double mu_s = hours * exp (-5.1 + 0.083 * age + site_s[s] + 0.9 * load);
    const double mu_r = exp (0.71 + 0.046 * age + 0.53 * log (load) + site_r[s]
                             - 0.12 * (double) du);
    const double mu_a = 3.2 + 0.41 * age + 2.3 * load;
    const unsigned stops = gsl_ran_poisson (r, mu_s);
    const double repair = gsl_ran_gamma (r, 2.7, mu_r / 2.7);
    const double amount = mu_a + gsl_ran_gaussian (r, 0.35 * pow (mu_a, 0.8));
    const double w = 0.5 + 1.5 * gsl_rng_uniform (r);
    test_buf_printf (&b, "%s,%s,%.6g,%.4g,%.5g,%u,%.6g,%.6g,%.4g\n", sites[s], duties[du], age,
                     load, hours, stops, repair, amount, w);
  }
  gsl_rng_free (r);
  return b.s;
}

static bl_table *
table_of (const char *csv, const char *name, const bl_model *m)
{
  bl_err err = { 0 };
  bl_table_opts to;
  bl_table *t;
  bl_table_opts_init (&to);
  if (m)
    bl_model_table_opts (m, &to);
  t = bl_table_read_mem (csv, strlen (csv), name, &to, &err);
  ck_assert_msg (t != NULL, "read %s: %s: %s", name, err.where, err.msg);
  return t;
}

/* One fitted model and what it rests on. */
typedef struct job {
  bl_table *t;
  bl_terms *terms, *offset;
  bl_design *d;
  bl_fit *f;
  char dir[256], path[512];
  bl_model *m;
} job;

/* Fit RESPONSE on TERMS (OFFSET, WEIGHTS may be NULL) with FO to the table of CSV, save the
   model to a temporary file and read it back. */
static void
job_run (job *j, const char *csv, const char *resp, const char *terms, const char *offset,
         const char *weights, const bl_fit_opts *fo, const char *name)
{
  bl_err err = { 0 };
  bl_design_opts dopt;
  FILE *f;
  memset (j, 0, sizeof *j);
  j->t = table_of (csv, "train.csv", NULL);
  j->terms = bl_terms_parse (terms, "--terms", &err);
  ck_assert_msg (j->terms != NULL, "%s: terms: %s", name, err.msg);
  if (offset) {
    j->offset = bl_terms_parse (offset, "--offset", &err);
    ck_assert_msg (j->offset != NULL, "%s: offset: %s", name, err.msg);
  }
  bl_design_opts_init (&dopt);
  dopt.offset = j->offset;
  dopt.weights = weights;
  dopt.variance = fo->variance == BL_VARIANCE_COLUMN ? fo->variance_col : NULL;
  j->d = bl_design_new (j->t, resp, j->terms, &dopt, &err);
  ck_assert_msg (j->d != NULL, "%s: design: %s: %s", name, err.where, err.msg);
  j->f = bl_fit_new (j->d, fo, &err);
  ck_assert_msg (j->f != NULL, "%s: fit: %s: %s", name, err.where, err.msg);
  ck_assert_msg (bl_fit_stats_get (j->f)->converged, "%s: not converged: %s", name,
                 bl_fit_status (j->f)->msg);
  test_tmpdir (j->dir, sizeof j->dir);
  snprintf (j->path, sizeof j->path, "%s/model.json", j->dir);
  f = fopen (j->path, "w");
  ck_assert_ptr_nonnull (f);
  ck_assert_int_eq (bl_model_write (f, j->f, j->terms, j->offset, weights, &err), BL_OK);
  ck_assert_int_eq (fclose (f), 0);
  j->m = bl_model_read (j->path, &err);
  ck_assert_msg (j->m != NULL, "%s: read back: %s: %s", name, err.where, err.msg);
}

static void
job_free (job *j)
{
  bl_model_free (j->m);
  bl_fit_free (j->f);
  bl_design_free (j->d);
  bl_terms_free (j->terms);
  bl_terms_free (j->offset);
  bl_table_free (j->t);
  unlink (j->path);
  rmdir (j->dir);
}

/* Predict with J's model on CSV; require success. */
static bl_prediction *
predict_ok (const job *j, const char *csv, double level, bl_table **tout, const char *name)
{
  bl_err err = { 0 };
  bl_table *t = table_of (csv, "new.csv", j->m);
  bl_prediction *p = bl_model_predict (j->m, t, level, &err);
  ck_assert_msg (p != NULL, "%s: predict: %s: %s", name, err.where, err.msg);
  ck_assert_uint_eq (p->n, bl_table_nrows (t));
  if (tout)
    *tout = t;
  else
    bl_table_free (t);
  return p;
}

/* The round trip: predictions on the training rows reproduce the fitted means. */
static void
check_roundtrip (const char *resp, const char *terms, const char *offset, const char *weights,
                 const bl_fit_opts *fo, size_t n, size_t step, const char *name)
{
  char *csv = pump_csv (n, 20260417);
  job j;
  bl_prediction *p;
  const double *mu, *eta, *y;
  long double sse = 0.0L;
  job_run (&j, csv, resp, terms, offset, weights, fo, name);
  ck_assert_uint_eq (bl_design_n (j.d), n);         /* no rows dropped: indices align */
  p = predict_ok (&j, csv, 0.0, NULL, name);
  mu = bl_fit_mu (j.f);
  eta = bl_fit_eta (j.f);
  y = bl_design_y (j.d);
  for (size_t i = 0; i < n; i += step) {
    /* transformed: the smeared mean of the fit at its own linear predictor */
    const double want = bl_fit_transform (j.f)->kind != BL_TRANSFORM_NONE
                        ? bl_fit_backtransform (j.f, eta[i], 1) : mu[i];
    ck_assert_msg (test_rel_abs0 (p->mean[i], want) <= 1e-12,
                   "%s: mean[%zu] %.17g, fit %.17g (rel %g)", name, i, p->mean[i], want,
                   test_rel_abs0 (p->mean[i], want));
    ck_assert_msg (p->mean_lo[i] <= p->mean[i] && p->mean[i] <= p->mean_hi[i],
                   "%s: mean interval [%zu]", name, i);
    ck_assert_msg (p->pred_lo[i] <= p->mean_lo[i] + 1e-9 * fabs (p->mean[i])
                   || bl_family_has (bl_fit_family (j.f), BL_FAM_DISCRETE),
                   "%s: prediction interval [%zu]", name, i);
  }
  /* the scores: RMSE is sqrt(mean (y - mean)^2) over all rows (its definition) */
  for (size_t i = 0; i < n; i++)
    sse += (long double) (y[i] - p->mean[i]) * (y[i] - p->mean[i]);
  ck_assert_msg (p->has_response && p->n_scored == n, "%s: scores", name);
  ck_assert_msg (test_rel_abs0 (p->rmse, sqrt ((double) (sse / n))) <= 1e-12, "%s: rmse", name);
  bl_prediction_free (p);
  job_free (&j);
  free (csv);
}

/* ---------------------------------------------------------------- reference */

START_TEST (model_roundtrip_gamma_log)
{
  bl_fit_opts fo;
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_gamma;
  fo.link = &bl_link_log;
  check_roundtrip ("repair", "age,site,duty,log(load)", NULL, NULL, &fo, 120, 1, "gamma log");
}
END_TEST

START_TEST (model_roundtrip_poisson_offset)
{
  bl_fit_opts fo;
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_poisson;
  check_roundtrip ("stops", "age,site,load", "log(hours)", NULL, &fo, 150, 1,
                   "poisson offset");
}
END_TEST

START_TEST (model_roundtrip_ols)
{
  bl_fit_opts fo;
  bl_fit_opts_init (&fo);
  fo.method = BL_METHOD_OLS;
  fo.fam = &bl_family_gaussian;
  check_roundtrip ("amount", "age,load,site,cross(site,age)", NULL, "w", &fo, 90, 1, "ols");
}
END_TEST

START_TEST (model_roundtrip_wls_fitted_est)
{
  bl_fit_opts fo;
  bl_fit_opts_init (&fo);
  fo.method = BL_METHOD_WLS;
  fo.variance = BL_VARIANCE_FITTED;
  fo.power_est = 1;
  check_roundtrip ("amount", "age,load,duty", NULL, NULL, &fo, 200, 1, "wls fitted^est");
}
END_TEST

START_TEST (model_roundtrip_boxcox)
{
  bl_fit_opts fo;
  bl_fit_opts_init (&fo);
  fo.method = BL_METHOD_OLS;
  fo.transform = BL_TRANSFORM_BOXCOX;
  fo.lambda_est = 1;
  check_roundtrip ("repair", "age,log(load),site", NULL, NULL, &fo, 110, 1, "boxcox est");
}
END_TEST

START_TEST (model_roundtrip_log_sqrt)
{
  bl_fit_opts fo;
  bl_fit_opts_init (&fo);
  fo.method = BL_METHOD_OLS;
  fo.transform = BL_TRANSFORM_LOG;
  check_roundtrip ("repair", "age,log(load),site", NULL, NULL, &fo, 100, 1, "log");
  fo.transform = BL_TRANSFORM_SQRT;
  check_roundtrip ("repair", "age,log(load),site", NULL, NULL, &fo, 100, 1, "sqrt");
}
END_TEST

/* Above BL_MODEL_RESIDUALS_MAX residuals the file keeps every k-th, the same subsample that
   bl_fit_backtransform smears over (fit.h), so the round trip stays exact. */
START_TEST (model_roundtrip_boxcox_subsample)
{
  bl_fit_opts fo;
  bl_fit_opts_init (&fo);
  fo.method = BL_METHOD_OLS;
  fo.transform = BL_TRANSFORM_BOXCOX;
  fo.lambda = 0.37;
  check_roundtrip ("repair", "age,log(load)", NULL, NULL, &fo, 2 * BL_MODEL_RESIDUALS_MAX + 3,
                   97, "boxcox subsample");
}
END_TEST

/* New rows for the gaussian and count checks: site 'kiln-road' is absent, so its indicator
   column must still be there (all zero); line numbers 2..7. */
static const char new_csv[] =
  "site,duty,age,load,hours,amount\n"
  "north-quay,light,3.85,0.414,612,5.93\n"
  "east-wharf,heavy,11.2,0.877,240.5,10.7\n"
  "mill-lane,standard,0.73,0.352,1033,NA\n"
  "north-quay,heavy,14.61,0.939,877,12.4\n"
  "mill-lane,light,7.09,0.668,455,7.71\n"
  "east-wharf,standard,5.27,0.51,705,6.02\n";

/* The design row of NEW_CSV row I for the terms age,load,site (reference east-wharf). */
static void
x_row (const bl_table *t, size_t i, double *x)
{
  const long js = bl_table_find (t, "site");
  const char *site = bl_table_level (t, (size_t) js, (size_t) bl_table_codes (t, (size_t) js)[i]);
  x[0] = 1.0;
  x[1] = bl_table_num (t, (size_t) bl_table_find (t, "age"))[i];
  x[2] = bl_table_num (t, (size_t) bl_table_find (t, "load"))[i];
  for (size_t k = 1; k < 4; k++)
    x[2 + k] = strcmp (site, sites[k]) == 0;
}

/* Textbook gaussian intervals (Draper & Smith 1998, section 3.2) by the normal equations. */
START_TEST (model_gaussian_textbook_intervals)
{
  enum { P = 6, N = 70 };
  char *csv = pump_csv (N, 77123);
  bl_fit_opts fo;
  job j;
  bl_table *tn;
  bl_prediction *p;
  gsl_matrix *xtx = gsl_matrix_calloc (P, P);
  gsl_vector *xty = gsl_vector_calloc (P), *b = gsl_vector_alloc (P);
  double rss = 0.0;
  bl_fit_opts_init (&fo);
  fo.method = BL_METHOD_OLS;
  fo.fam = &bl_family_gaussian;
  job_run (&j, csv, "amount", "age,load,site", NULL, NULL, &fo, "gaussian");
  /* X'X and X'y over the training rows, then b and (X'X)^-1 by Cholesky */
  for (size_t i = 0; i < N; i++) {
    double x[P];
    const double yi = bl_table_num (j.t, (size_t) bl_table_find (j.t, "amount"))[i];
    x_row (j.t, i, x);
    for (size_t r = 0; r < P; r++) {
      for (size_t c = 0; c < P; c++)
        *gsl_matrix_ptr (xtx, r, c) += x[r] * x[c];
      *gsl_vector_ptr (xty, r) += x[r] * yi;
    }
  }
  ck_assert_int_eq (gsl_linalg_cholesky_decomp1 (xtx), GSL_SUCCESS);
  ck_assert_int_eq (gsl_linalg_cholesky_solve (xtx, xty, b), GSL_SUCCESS);
  ck_assert_int_eq (gsl_linalg_cholesky_invert (xtx), GSL_SUCCESS);
  for (size_t i = 0; i < N; i++) {
    double x[P], fit = 0.0;
    const double yi = bl_table_num (j.t, (size_t) bl_table_find (j.t, "amount"))[i];
    x_row (j.t, i, x);
    for (size_t r = 0; r < P; r++)
      fit += x[r] * gsl_vector_get (b, r);
    rss += (yi - fit) * (yi - fit);
  }
  for (int lv = 0; lv < 2; lv++) {
    const double level = lv ? 0.9 : 0.95;
    const double t = gsl_cdf_tdist_Pinv (0.5 + level / 2.0, N - P), s = sqrt (rss / (N - P));
    p = predict_ok (&j, new_csv, lv ? 0.9 : 0.0, &tn, "gaussian");
    for (size_t i = 0; i < p->n; i++) {
      double x[P], xb = 0.0, h = 0.0;
      x_row (tn, i, x);
      for (size_t r = 0; r < P; r++) {
        xb += x[r] * gsl_vector_get (b, r);
        for (size_t c = 0; c < P; c++)
          h += x[r] * gsl_matrix_get (xtx, r, c) * x[c];
      }
      ck_assert_msg (test_rel_abs0 (p->mean[i], xb) <= 1e-10, "gaussian %g mean[%zu]", level, i);
      ck_assert_msg (test_rel_abs0 (p->mean_lo[i], xb - t * s * sqrt (h)) <= 1e-10,
                     "gaussian %g mean_lo[%zu] %.17g want %.17g", level, i, p->mean_lo[i],
                     xb - t * s * sqrt (h));
      ck_assert_msg (test_rel_abs0 (p->mean_hi[i], xb + t * s * sqrt (h)) <= 1e-10,
                     "gaussian %g mean_hi[%zu]", level, i);
      ck_assert_msg (test_rel_abs0 (p->pred_lo[i], xb - t * s * sqrt (1.0 + h)) <= 1e-10,
                     "gaussian %g pred_lo[%zu] %.17g want %.17g", level, i, p->pred_lo[i],
                     xb - t * s * sqrt (1.0 + h));
      ck_assert_msg (test_rel_abs0 (p->pred_hi[i], xb + t * s * sqrt (1.0 + h)) <= 1e-10,
                     "gaussian %g pred_hi[%zu]", level, i);
    }
    /* row 3 has no amount: scored over the other 5 */
    ck_assert_msg (p->has_response && p->n_scored == 5, "gaussian: n_scored %zu", p->n_scored);
    bl_prediction_free (p);
    bl_table_free (tn);
  }
  gsl_matrix_free (xtx);
  gsl_vector_free (xty);
  gsl_vector_free (b);
  job_free (&j);
  free (csv);
}
END_TEST

/* WLS with Var y = sigma^2 load^2: the interval for a new row is x'b -/+ t s sqrt(v_new +
   x'(X'WX)^-1 x) with W = diag(1 / v) (Draper & Smith 1998, section 9.2, weighted least
   squares as least squares of the rescaled rows), computed by the normal equations. */
START_TEST (model_wls_column_intervals)
{
  enum { P = 6, N = 80 };
  char *csv = pump_csv (N, 5531);
  bl_fit_opts fo;
  job j;
  bl_table *tn;
  bl_prediction *p;
  gsl_matrix *xtx = gsl_matrix_calloc (P, P);
  gsl_vector *xty = gsl_vector_calloc (P), *b = gsl_vector_alloc (P);
  double rss = 0.0, t, s;
  const double K = 2.0;
  bl_fit_opts_init (&fo);
  fo.method = BL_METHOD_WLS;
  fo.variance = BL_VARIANCE_COLUMN;
  fo.variance_col = "load";
  fo.power = K;
  job_run (&j, csv, "amount", "age,load,site", NULL, NULL, &fo, "wls load^2");
  for (int pass = 0; pass < 2; pass++)
    for (size_t i = 0; i < N; i++) {
      double x[P], fit = 0.0;
      const double yi = bl_table_num (j.t, (size_t) bl_table_find (j.t, "amount"))[i];
      const double v = pow (bl_table_num (j.t, (size_t) bl_table_find (j.t, "load"))[i], K);
      x_row (j.t, i, x);
      for (size_t r = 0; r < P && pass == 0; r++) {
        for (size_t c = 0; c < P; c++)
          *gsl_matrix_ptr (xtx, r, c) += x[r] * x[c] / v;
        *gsl_vector_ptr (xty, r) += x[r] * yi / v;
      }
      if (pass == 0 && i == N - 1) {
        ck_assert_int_eq (gsl_linalg_cholesky_decomp1 (xtx), GSL_SUCCESS);
        ck_assert_int_eq (gsl_linalg_cholesky_solve (xtx, xty, b), GSL_SUCCESS);
        ck_assert_int_eq (gsl_linalg_cholesky_invert (xtx), GSL_SUCCESS);
      }
      if (pass == 1) {
        for (size_t r = 0; r < P; r++)
          fit += x[r] * gsl_vector_get (b, r);
        rss += (yi - fit) * (yi - fit) / v;
      }
    }
  t = gsl_cdf_tdist_Pinv (0.975, N - P);
  s = sqrt (rss / (N - P));
  p = predict_ok (&j, new_csv, 0.0, &tn, "wls load^2");
  for (size_t i = 0; i < p->n; i++) {
    double x[P], xb = 0.0, h = 0.0;
    const double v = pow (bl_table_num (tn, (size_t) bl_table_find (tn, "load"))[i], K);
    x_row (tn, i, x);
    for (size_t r = 0; r < P; r++) {
      xb += x[r] * gsl_vector_get (b, r);
      for (size_t c = 0; c < P; c++)
        h += x[r] * gsl_matrix_get (xtx, r, c) * x[c];
    }
    ck_assert_msg (test_rel_abs0 (p->pred_lo[i], xb - t * s * sqrt (v + h)) <= 1e-9,
                   "wls pred_lo[%zu] %.17g want %.17g", i, p->pred_lo[i],
                   xb - t * s * sqrt (v + h));
    ck_assert_msg (test_rel_abs0 (p->pred_hi[i], xb + t * s * sqrt (v + h)) <= 1e-9,
                   "wls pred_hi[%zu]", i);
  }
  bl_prediction_free (p);
  bl_table_free (tn);
  gsl_matrix_free (xtx);
  gsl_vector_free (xty);
  gsl_vector_free (b);
  job_free (&j);
  free (csv);
}
END_TEST

/* Poisson with an exposure offset: the mean is exp(x'b + log hours) (computed here from the
   coefficients), and the interval ends are the 0.025 and 0.975 quantiles of Poisson(mean):
   the smallest k with P(X <= k) >= p (the definition; CDF from GSL). */
START_TEST (model_poisson_quantiles)
{
  enum { P = 6 };
  char *csv = pump_csv (160, 9001);
  bl_fit_opts fo;
  job j;
  bl_table *tn;
  bl_prediction *p;
  const double *b;
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_poisson;
  job_run (&j, csv, "stops", "age,load,site", "log(hours)", NULL, &fo, "poisson");
  b = bl_fit_beta (j.f);
  p = predict_ok (&j, new_csv, 0.0, &tn, "poisson");
  for (size_t i = 0; i < p->n; i++) {
    double x[P], eta = log (bl_table_num (tn, (size_t) bl_table_find (tn, "hours"))[i]);
    const double lo = p->pred_lo[i], hi = p->pred_hi[i];
    x_row (tn, i, x);
    for (size_t r = 0; r < P; r++)
      eta += x[r] * b[r];
    ck_assert_msg (test_rel_abs0 (p->mean[i], exp (eta)) <= 1e-12, "poisson mean[%zu]", i);
    ck_assert_msg (lo == floor (lo) && hi == floor (hi) && lo <= hi, "poisson ends [%zu]", i);
    ck_assert_msg (gsl_cdf_poisson_P ((unsigned) lo, p->mean[i]) >= 0.025
                   && (lo == 0.0 || gsl_cdf_poisson_P ((unsigned) lo - 1, p->mean[i]) < 0.025),
                   "poisson pred_lo[%zu] = %g is not the 0.025 quantile of Poisson(%g)", i, lo,
                   p->mean[i]);
    ck_assert_msg (gsl_cdf_poisson_P ((unsigned) hi, p->mean[i]) >= 0.975
                   && gsl_cdf_poisson_P ((unsigned) hi - 1, p->mean[i]) < 0.975,
                   "poisson pred_hi[%zu] = %g is not the 0.975 quantile of Poisson(%g)", i, hi,
                   p->mean[i]);
  }
  ck_assert (!p->has_response);                /* new_csv has no 'stops' */
  bl_prediction_free (p);
  bl_table_free (tn);
  job_free (&j);
  free (csv);
}
END_TEST

/* Gamma: the ends are quantiles of the gamma with mean mu and variance phi mu^2 (shape 1/phi,
   scale mu phi; McCullagh & Nelder 1989, table 2.1), phi the ML dispersion. */
START_TEST (model_gamma_quantiles)
{
  char *csv = pump_csv (130, 31337);
  bl_fit_opts fo;
  job j;
  bl_prediction *p;
  double phi;
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_gamma;
  fo.link = &bl_link_log;
  job_run (&j, csv, "repair", "age,load,site", NULL, NULL, &fo, "gamma");
  phi = bl_fit_stats_get (j.f)->phi_ml;
  p = predict_ok (&j, new_csv, 0.0, NULL, "gamma");
  for (size_t i = 0; i < p->n; i++) {
    const double a = 1.0 / phi, sc = p->mean[i] * phi;
    ck_assert_msg (fabs (gsl_cdf_gamma_P (p->pred_lo[i], a, sc) - 0.025) <= 1e-10,
                   "gamma pred_lo[%zu]", i);
    ck_assert_msg (fabs (gsl_cdf_gamma_Q (p->pred_hi[i], a, sc) - 0.025) <= 1e-10,
                   "gamma pred_hi[%zu]", i);
  }
  bl_prediction_free (p);
  job_free (&j);
  free (csv);
}
END_TEST

typedef struct ig_par { double mu, lambda; } ig_par;

/* Inverse gaussian density (Chhikara & Folks 1989, eq. 2.1). */
static double
ig_pdf (double x, void *arg)
{
  const ig_par *q = arg;
  if (x <= 0.0)
    return 0.0;
  return sqrt (q->lambda / (2.0 * M_PI * x * x * x))
         * exp (-q->lambda * (x - q->mu) * (x - q->mu) / (2.0 * q->mu * q->mu * x));
}

/* Inverse gaussian: the density integrated from 0 to each end (GSL QAGS) is 0.025 and
   0.975, with mu the predicted mean and lambda = 1 / phi_ml. */
START_TEST (model_invgauss_quantiles)
{
  char *csv = pump_csv (140, 424242);
  bl_fit_opts fo;
  job j;
  bl_prediction *p;
  gsl_integration_workspace *ws = gsl_integration_workspace_alloc (1000);
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_invgauss;
  fo.link = &bl_link_log;
  job_run (&j, csv, "repair", "age,load,site", NULL, NULL, &fo, "inverse gaussian");
  p = predict_ok (&j, new_csv, 0.0, NULL, "inverse gaussian");
  for (size_t i = 0; i < p->n; i++) {
    ig_par q = { p->mean[i], 1.0 / bl_fit_stats_get (j.f)->phi_ml };
    gsl_function F = { ig_pdf, &q };
    double lo, hi, e;
    ck_assert_int_eq (gsl_integration_qags (&F, 0.0, p->pred_lo[i], 1e-13, 1e-10, 1000, ws,
                                            &lo, &e), GSL_SUCCESS);
    ck_assert_int_eq (gsl_integration_qags (&F, 0.0, p->pred_hi[i], 1e-13, 1e-10, 1000, ws,
                                            &hi, &e), GSL_SUCCESS);
    ck_assert_msg (fabs (lo - 0.025) <= 1e-8, "ig pred_lo[%zu]: F = %.12g", i, lo);
    ck_assert_msg (fabs (hi - 0.975) <= 1e-8, "ig pred_hi[%zu]: F = %.12g", i, hi);
  }
  gsl_integration_workspace_free (ws);
  bl_prediction_free (p);
  job_free (&j);
  free (csv);
}
END_TEST

/* ---------------------------------------------------------------- identities */

/* The saved numbers read back bit for bit (%.17g; C99 7.19.6.1 and IEEE 754 round trip of
   17 significant digits). */
START_TEST (model_numbers_exact)
{
  char *csv = pump_csv (60, 1234);
  bl_fit_opts fo;
  job j;
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_gamma;
  fo.link = &bl_link_log;
  job_run (&j, csv, "repair", "age,site,duty", NULL, NULL, &fo, "exact");
  ck_assert_uint_eq (bl_model_p (j.m), bl_design_p (j.d));
  for (size_t k = 0; k < bl_model_p (j.m); k++) {
    ck_assert_str_eq (bl_model_label (j.m, k), bl_design_label (j.d, k));
    ck_assert_msg (bl_model_beta (j.m)[k] == bl_fit_beta (j.f)[k], "beta[%zu]", k);
    for (size_t l = 0; l < bl_model_p (j.m); l++)
      ck_assert_msg (bl_model_cov (j.m)[k + l * bl_model_p (j.m)]
                     == bl_fit_cov (j.f)[k + l * bl_model_p (j.m)], "cov[%zu,%zu]", k, l);
  }
  ck_assert_str_eq (bl_model_response (j.m), "repair");
  ck_assert (bl_model_level (j.m) == 0.95);
  job_free (&j);
  free (csv);
}
END_TEST

/* ---------------------------------------------------------------- errors */

static job ej;                   /* the model the error tests use (read-only after setup) */
static char *ecsv;

static void
errors_setup (void)
{
  bl_fit_opts fo;
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_gamma;
  fo.link = &bl_link_log;
  ecsv = pump_csv (90, 271828);
  job_run (&ej, ecsv, "repair", "age,log(load),site", NULL, NULL, &fo, "errors");
}

static void
errors_teardown (void)
{
  job_free (&ej);
  free (ecsv);
}

/* Predicting on CSV must fail with CODE, WHERE and a message containing FRAG. */
static void
predict_fails (const char *csv, int code, const char *where, const char *frag,
               const char *name)
{
  bl_err err = { 0 };
  bl_table *t = table_of (csv, "new.csv", ej.m);
  bl_prediction *p = bl_model_predict (ej.m, t, 0.0, &err);
  ck_assert_msg (p == NULL, "%s: predicted", name);
  ck_assert_msg (err.code == code, "%s: code %d, expected %d (%s)", name, err.code, code,
                 err.msg);
  ck_assert_msg (strcmp (err.where, where) == 0, "%s: where '%s', expected '%s'", name,
                 err.where, where);
  ck_assert_msg (strstr (err.msg, frag) != NULL, "%s: message '%s' lacks '%s'", name, err.msg,
                 frag);
  bl_table_free (t);
}

START_TEST (model_error_missing_column)
{
  predict_fails ("site,age\nmill-lane,3.2\n", BL_EDATA, "new.csv:1",
                 "no column 'load', which the model needs (term 'log(load)')", "missing column");
}
END_TEST

START_TEST (model_error_unseen_level)
{
  predict_fails ("site,age,load\nmill-lane,3.2,0.5\nsouth-pier,4.1,0.6\n", BL_EDATA,
                 "new.csv:3", "'site' has level 'south-pier', which the model does not know",
                 "unseen level");
}
END_TEST

START_TEST (model_error_missing_cell)
{
  predict_fails ("site,age,load\nmill-lane,3.2,0.5\nkiln-road,4.1,0.6\nmill-lane,,0.7\n",
                 BL_EDATA, "new.csv:4", "missing value in 'age'", "missing cell");
}
END_TEST

START_TEST (model_error_domain)
{
  predict_fails ("site,age,load\nmill-lane,3.2,-0.5\n", BL_EDATA, "new.csv:2",
                 "log(load): value -0.5 is not > 0", "domain");
}
END_TEST

START_TEST (model_error_not_numeric)
{
  predict_fails ("site,age,load\nmill-lane,old,0.5\nmill-lane,3.2,0.6\n", BL_EDATA,
                 "new.csv:2:2", "'age' is numeric in the model, but this cell is not a number: "
                 "'old' (1 of the column's 2 non-missing cells are not)", "not numeric");
  /* a number first: the cell named is the first that is not one, not the first cell */
  predict_fails ("site,age,load\nmill-lane,3.2,0.5\nmill-lane,old,0.6\nmill-lane,new,0.7\n",
                 BL_EDATA, "new.csv:3:2", "this cell is not a number: 'old' (2 of the column's 3",
                 "not numeric, number first");
  {
    /* a minority typo: the reader's error names the cell (read with the model's options) */
    static const char csv[] = "site,age,load\nmill-lane,3.2,0.5\nmill-lane,1.2.3,0.6\n"
                              "mill-lane,4,0.7\n";
    bl_err err = { 0 };
    bl_table_opts to;
    bl_table_opts_init (&to);
    bl_model_table_opts (ej.m, &to);
    ck_assert_ptr_null (bl_table_read_mem (csv, strlen (csv), "new.csv", &to, &err));
    ck_assert_int_eq (err.code, BL_EDATA);
    ck_assert_str_eq (err.where, "new.csv:3:2");
    ck_assert_msg (strstr (err.msg, "not a number: '1.2.3' in column 'age'") != NULL, "%s",
                   err.msg);
  }
}
END_TEST

START_TEST (model_error_response_support)
{
  predict_fails ("site,age,load,repair\nmill-lane,3.2,0.5,1.5\nmill-lane,3.3,0.6,-2\n",
                 BL_EDATA, "new.csv:3", "'repair' value -2 is outside the gamma family's "
                 "support", "response support");
}
END_TEST

/* A linear predictor outside the family's mean space (gamma: mu > 0) with the identity link,
   far outside the fitted ages. */
START_TEST (model_error_mean_domain)
{
  char *csv = pump_csv (100, 8080);
  bl_fit_opts fo;
  bl_err err = { 0 };
  job j;
  bl_table *t;
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_gamma;
  fo.link = &bl_link_identity;
  job_run (&j, csv, "repair", "age", NULL, NULL, &fo, "gamma identity");
  ck_assert_msg (bl_fit_beta (j.f)[1] > 0.0, "gamma identity: slope %g", bl_fit_beta (j.f)[1]);
  t = table_of ("age\n3.5\n-1e4\n", "new.csv", j.m);
  ck_assert_ptr_null (bl_model_predict (j.m, t, 0.0, &err));
  ck_assert_int_eq (err.code, BL_EDATA);
  ck_assert_str_eq (err.where, "new.csv:3");
  ck_assert_ptr_nonnull (strstr (err.msg, "gives no valid mean of the gamma family"));
  bl_table_free (t);
  job_free (&j);
  free (csv);
}
END_TEST

START_TEST (model_error_level)
{
  bl_err err = { 0 };
  bl_table *t = table_of ("site,age,load\nmill-lane,3.2,0.5\n", "new.csv", ej.m);
  ck_assert_ptr_null (bl_model_predict (ej.m, t, 1.5, &err));
  ck_assert_int_eq (err.code, BL_ESPEC);
  ck_assert_str_eq (err.where, "--level");
  bl_table_free (t);
}
END_TEST

START_TEST (model_error_keep)
{
  bl_err err = { 0 };
  const char *keep[] = { "site", "serial" };
  bl_table *t = table_of ("site,age,load\nmill-lane,3.2,0.5\n", "new.csv", ej.m);
  bl_prediction *p = bl_model_predict (ej.m, t, 0.0, &err);
  FILE *f = tmpfile ();
  bl_prediction_csv_opts opt;
  bl_prediction_csv_opts_init (&opt);
  opt.keep = keep;
  opt.nkeep = 2;
  ck_assert_ptr_nonnull (p);
  ck_assert_int_eq (bl_prediction_write_csv (f, p, t, &opt, &err), BL_EDATA);
  ck_assert_str_eq (err.where, "new.csv:1");
  ck_assert_ptr_nonnull (strstr (err.msg, "no column 'serial' to keep"));
  ck_assert_int_eq (ftell (f), 0);                  /* nothing written */
  fclose (f);
  bl_prediction_free (p);
  bl_table_free (t);
}
END_TEST

/* Write the saved model of EJ with FROM replaced by TO (first occurrence) or, with TO NULL,
   cut at FROM, to a new file; return its path in BUF. */
static const char *
variant (const char *from, const char *to, char *buf, size_t cap)
{
  FILE *f = fopen (ej.path, "rb");
  char *s, *hit;
  long len;
  ck_assert_ptr_nonnull (f);
  fseek (f, 0, SEEK_END);
  len = ftell (f);
  rewind (f);
  s = calloc ((size_t) len + 1, 1);
  ck_assert_uint_eq (fread (s, 1, (size_t) len, f), (size_t) len);
  fclose (f);
  hit = strstr (s, from);
  ck_assert_msg (hit != NULL, "variant: '%s' not in the model file", from);
  snprintf (buf, cap, "%s/variant.json", ej.dir);
  f = fopen (buf, "wb");
  fwrite (s, 1, (size_t) (hit - s), f);
  if (to) {
    fputs (to, f);
    fputs (hit + strlen (from), f);
  }
  fclose (f);
  free (s);
  return buf;
}

static void
read_fails (const char *path, int code, const char *where, const char *frag, const char *name)
{
  bl_err err = { 0 };
  bl_model *m = bl_model_read (path, &err);
  ck_assert_msg (m == NULL, "%s: read", name);
  ck_assert_msg (err.code == code, "%s: code %d, expected %d (%s)", name, err.code, code,
                 err.msg);
  ck_assert_msg (strcmp (err.where, where) == 0, "%s: where '%s', expected '%s'", name,
                 err.where, where);
  ck_assert_msg (strstr (err.msg, frag) != NULL, "%s: message '%s' lacks '%s'", name, err.msg,
                 frag);
}

/* Read back the CSV that bl_prediction_write_csv writes for P on T with OPT into BUF. */
static int
csv_text (const bl_prediction *p, const bl_table *t, const bl_prediction_csv_opts *opt,
          char *buf, size_t cap, bl_err *err)
{
  FILE *f = tmpfile ();
  size_t n;
  int st;
  ck_assert_ptr_nonnull (f);
  st = bl_prediction_write_csv (f, p, t, opt, err);
  rewind (f);
  n = fread (buf, 1, cap - 1, f);
  buf[n] = '\0';
  fclose (f);
  return st;
}

/* The options of the CSV writer: defaults (also for OPT NULL), the median column, kept
   columns quoted per RFC 4180, and a kept name that only clashes with the median column
   when that column is written. */
START_TEST (model_csv_options)
{
  bl_err err = { 0 };
  const char *keep[] = { "note", "median" };
  bl_table *t = table_of ("site,age,load,note,median\nmill-lane,3.2,0.5,\"no. 4, \"\"old\"\"\","
                          "7\n", "new.csv", ej.m);
  bl_prediction *p = bl_model_predict (ej.m, t, 0.0, &err);
  bl_prediction_csv_opts opt;
  char a[2048], b[2048], want[2048];
  ck_assert_msg (p != NULL, "%s: %s", err.where, err.msg);
  bl_prediction_csv_opts_init (&opt);
  ck_assert_ptr_null (opt.keep);
  ck_assert_uint_eq (opt.nkeep, 0);
  ck_assert_int_eq (opt.median, 0);
  ck_assert_int_eq (csv_text (p, t, &opt, a, sizeof a, &err), BL_OK);
  ck_assert_int_eq (csv_text (p, t, NULL, b, sizeof b, &err), BL_OK);
  ck_assert_str_eq (a, b);
  snprintf (want, sizeof want, "row,mean,mean_lo,mean_hi,pred_lo,pred_hi\n1,%.17g,%.17g,"
            "%.17g,%.17g,%.17g\n", p->mean[0], p->mean_lo[0], p->mean_hi[0], p->pred_lo[0],
            p->pred_hi[0]);
  ck_assert_str_eq (a, want);
  /* keep 'note' (quoted: it holds a comma and quotes) and 'median', a column of the data */
  opt.keep = keep;
  opt.nkeep = 2;
  ck_assert_int_eq (csv_text (p, t, &opt, a, sizeof a, &err), BL_OK);
  snprintf (want, sizeof want, "row,mean,mean_lo,mean_hi,pred_lo,pred_hi,note,median\n"
            "1,%.17g,%.17g,%.17g,%.17g,%.17g,\"no. 4, \"\"old\"\"\",7\n", p->mean[0], p->mean_lo[0],
            p->mean_hi[0], p->pred_lo[0], p->pred_hi[0]);
  ck_assert_str_eq (a, want);
  /* with the median column (empty: a GLM has no median), 'median' cannot be kept */
  opt.median = 1;
  opt.nkeep = 1;
  ck_assert_int_eq (csv_text (p, t, &opt, a, sizeof a, &err), BL_OK);
  snprintf (want, sizeof want, "row,mean,mean_lo,mean_hi,pred_lo,pred_hi,median,note\n"
            "1,%.17g,%.17g,%.17g,%.17g,%.17g,,\"no. 4, \"\"old\"\"\"\n", p->mean[0], p->mean_lo[0],
            p->mean_hi[0], p->pred_lo[0], p->pred_hi[0]);
  ck_assert_str_eq (a, want);
  opt.nkeep = 2;
  ck_assert_int_eq (csv_text (p, t, &opt, a, sizeof a, &err), BL_EDATA);
  ck_assert_str_eq (err.where, "new.csv:1");
  ck_assert_ptr_nonnull (strstr (err.msg, "cannot keep column 'median'"));
  ck_assert_str_eq (a, "");                         /* nothing written */
  bl_prediction_free (p);
  bl_table_free (t);
}
END_TEST

START_TEST (model_error_files)
{
  char p[600], w[700];
  snprintf (p, sizeof p, "%s/absent.json", ej.dir);
  read_fails (p, BL_EIO, p, "cannot open", "absent");
  variant ("\"format\": \"ballast-model\"", "\"format\": \"spreadsheet\"", p, sizeof p);
  read_fails (p, BL_EDATA, p, "not a ballast model file", "not a model");
  variant ("\"format_version\": 1", "\"format_version\": 2", p, sizeof p);
  read_fails (p, BL_EDATA, p, "'format_version': 2 is newer than this ballast reads (1)",
              "newer");
  variant ("\"columns\"", NULL, p, sizeof p);           /* the file cut short */
  {
    /* the cut is inside the object: Jansson reports the end of the input */
    bl_err err = { 0 };
    ck_assert_ptr_null (bl_model_read (p, &err));
    ck_assert_int_eq (err.code, BL_EDATA);
    snprintf (w, sizeof w, "%s:", p);
    ck_assert_msg (strncmp (err.where, w, strlen (w)) == 0, "corrupt: where '%s'", err.where);
    ck_assert_ptr_nonnull (strstr (err.msg, "invalid JSON"));
  }
  variant ("\"method\": \"glm\"", "\"method\": \"guess\"", p, sizeof p);
  read_fails (p, BL_EDATA, p, "'method': expected glm, ols or wls", "bad method");
  variant ("\"coef\": [", "\"coef\": [ 1.5,", p, sizeof p);
  read_fails (p, BL_EDATA, p, "'coef': expected 6 entries, found 7", "coef length");
  variant ("\"level\": 0.94999999999999996", "\"level\": \"high\"", p, sizeof p);
  read_fails (p, BL_EDATA, p, "'level': expected a number", "level type");
  variant ("\"dof_resid\"", "\"dof_left\"", p, sizeof p);
  read_fails (p, BL_EDATA, p, "'dof_resid': missing", "missing key");
}
END_TEST

/* A model whose labels disagree with what its terms give is refused when predicting. */
START_TEST (model_error_inconsistent)
{
  char p[600];
  bl_err err = { 0 };
  bl_model *m;
  bl_table *t;
  variant ("\"site=mill-lane\"", "\"site=mill-road\"", p, sizeof p);
  m = bl_model_read (p, &err);
  ck_assert_ptr_nonnull (m);
  t = table_of ("site,age,load\nmill-lane,3.2,0.5\n", "new.csv", m);
  ck_assert_ptr_null (bl_model_predict (m, t, 0.0, &err));
  ck_assert_int_eq (err.code, BL_EDATA);
  ck_assert_str_eq (err.where, p);
  ck_assert_ptr_nonnull (strstr (err.msg, "inconsistent model"));
  bl_table_free (t);
  bl_model_free (m);
}
END_TEST

/* ---------------------------------------------------------------- contradictions */

/* The saved model of EJ as a Jansson document (the caller decrefs). */
static json_t *
model_doc (void)
{
  json_error_t je;
  json_t *d = json_load_file (ej.path, 0, &je);
  ck_assert_msg (d != NULL, "model_doc: %s", je.text);
  return d;
}

/* Element [J][K] of the covariance of D (K < 0: row J of it). */
static json_t *
cov_at (json_t *d, size_t j, long k)
{
  json_t *row = json_array_get (json_object_get (d, "cov"), j);
  return k < 0 ? row : json_array_get (row, (size_t) k);
}

static double
cov_num (json_t *d, size_t j, size_t k)
{
  return json_number_value (cov_at (d, j, (long) k));
}

static void
cov_set (json_t *d, size_t j, size_t k, double v)
{
  ck_assert_int_eq (json_array_set_new (cov_at (d, j, -1), k, json_real (v)), 0);
}

/* D (decref'd here) written to EJ's folder as edit.json, whose path is returned in BUF. */
static const char *
doc_file (json_t *d, char *buf, size_t cap)
{
  snprintf (buf, cap, "%s/edit.json", ej.dir);
  ck_assert_int_eq (json_dump_file (d, buf, JSON_INDENT (1) | JSON_REAL_PRECISION (17)), 0);
  json_decref (d);
  return buf;
}

/* D must read (when FRAG is NULL), or be refused with BL_EDATA at the file and a message
   holding FRAG. */
static void
doc_reads (json_t *d, const char *frag, const char *name)
{
  char p[600];
  doc_file (d, p, sizeof p);
  if (frag) {
    read_fails (p, BL_EDATA, p, frag, name);
  } else {
    bl_err err = { 0 };
    bl_model *m = bl_model_read (p, &err);
    ck_assert_msg (m != NULL, "%s: refused (%s)", name, err.msg);
    bl_model_free (m);
  }
}

/* The covariance replaced by D0 R D0, D0 the saved standard errors and R = (1 - a) I + a J
   (J all ones): R's eigenvalues are 1 - a (q - 1 times) and 1 + (q - 1) a (closed form,
   common practice, no source), so a = (lmin - 1) / (q - 1) makes the least one LMIN. */
static json_t *
equicorrelated (double lmin)
{
  json_t *d = model_doc ();
  const size_t q = json_array_size (json_object_get (d, "cov"));
  const double a = (lmin - 1.0) / (double) (q - 1);
  double sd[32];
  ck_assert_uint_le (q, 32);
  for (size_t j = 0; j < q; j++)
    sd[j] = sqrt (cov_num (d, j, j));
  for (size_t j = 0; j < q; j++)
    for (size_t k = 0; k < q; k++)
      cov_set (d, j, k, (j == k ? 1.0 : a) * sd[j] * sd[k]);
  return d;
}

/* The covariance checks of model_check.c on the saved 6-column gamma model: each edit of one
   entry refused with its JSON path; the tolerances (symmetry 1e-12 max|V|, least eigenvalue of
   the correlation form above -1e-10 q) on both sides. */
START_TEST (model_error_covariance)
{
  json_t *d;
  double vmax = 0.0;
  char frag[200];

  d = model_doc ();
  cov_set (d, 1, 1, -cov_num (d, 1, 1));
  doc_reads (d, "'cov[1][1]': a variance must be >= 0", "negative variance");

  d = model_doc ();
  cov_set (d, 2, 1, 1.5 * cov_num (d, 2, 1));
  doc_reads (d, "'cov[2][1]': not symmetric", "asymmetric");

  d = model_doc ();
  for (size_t j = 0; j < 6; j++)
    for (size_t k = 0; k < 6; k++)
      vmax = fmax (vmax, fabs (cov_num (d, j, k)));
  cov_set (d, 4, 0, cov_num (d, 4, 0) + 1e-14 * vmax);
  doc_reads (d, NULL, "asymmetric by 1e-14 max|V|: within the tolerance");
  d = model_doc ();
  cov_set (d, 4, 0, cov_num (d, 4, 0) + 1e-10 * vmax);
  doc_reads (d, "'cov[4][0]': not symmetric", "asymmetric by 1e-10 max|V|");

  d = model_doc ();
  cov_set (d, 3, 1, 1.01 * sqrt (cov_num (d, 1, 1) * cov_num (d, 3, 3)));
  cov_set (d, 1, 3, cov_num (d, 3, 1));
  doc_reads (d, "'cov[3][1]': not positive semi-definite: the correlation of columns 3 and 1",
             "correlation 1.01");

  /* rank 1 (every correlation 1): singular and positive semi-definite, accepted; least
     eigenvalues -1e-12 and -1e-10 are rounding-sized next to the tolerance -6e-10; -1e-8 and
     -0.1 are refused */
  doc_reads (equicorrelated (0.0), NULL, "equicorrelated, least eigenvalue 0");
  doc_reads (equicorrelated (-1e-12), NULL, "least eigenvalue -1e-12");
  doc_reads (equicorrelated (-1e-10), NULL, "least eigenvalue -1e-10");
  snprintf (frag, sizeof frag, "'cov': not positive semi-definite: its correlation form has "
            "an eigenvalue below -%g", 6e-10);
  doc_reads (equicorrelated (-1e-8), frag, "least eigenvalue -1e-8");
  doc_reads (equicorrelated (-0.1), frag, "least eigenvalue -0.1");
  doc_reads (equicorrelated (0.5), NULL, "least eigenvalue 0.5");

  d = model_doc ();
  cov_set (d, 5, 5, 0.0);
  doc_reads (d, "'cov[5][0]': ", "zero variance, nonzero covariance");
}
END_TEST

/* The other checks across keys, one edit each. */
START_TEST (model_error_contradictions)
{
  json_t *d, *cat;

  d = model_doc ();
  json_object_set_new (d, "dispersion", json_real (-0.5));
  doc_reads (d, "'dispersion': expected a number >= 0, got -0.5", "negative dispersion");

  d = model_doc ();
  json_object_set_new (d, "family_par", json_real (2.0));
  doc_reads (d, "'family_par': expected null: the gamma family has no parameter", "family_par");

  d = model_doc ();
  cat = json_array_get (json_object_get (d, "categorical"), 0);
  json_array_set (json_object_get (cat, "levels"), 2,
                  json_array_get (json_object_get (cat, "levels"), 0));
  doc_reads (d, "'categorical[0].levels[2]': level 'kiln-road' of 'site' repeats levels[0]",
             "repeated level");

  d = model_doc ();
  cat = json_array_get (json_object_get (d, "categorical"), 0);
  json_object_set (cat, "reference", json_array_get (json_object_get (cat, "levels"), 1));
  doc_reads (d, "'categorical[0].reference': the reference 'mill-lane' of 'site' is also "
             "listed in levels[1]", "reference among the levels");

  d = model_doc ();
  json_object_set_new (d, "smearing", json_object ());
  doc_reads (d, "'smearing': expected null: a model without a transform has no smearing",
             "smearing without a transform");

  d = model_doc ();
  json_object_set_new (d, "rank", json_integer (7));
  doc_reads (d, "'rank': 7, but 'coef' has 6 estimated", "rank");

  d = model_doc ();
  json_object_set_new (d, "level", json_real (1.0));
  doc_reads (d, "'level': expected a number in (0, 1), got 1", "level 1");
}
END_TEST

/* Class 3 of issue 14: a message that lists the valid values lists every value of the table
   that defines them (methods: bl_method_name; families: bl_family_at; links: bl_link_at; se
   kinds: bl_se_kind_name). */
START_TEST (model_error_lists_complete)
{
  static const struct { const char *key, *bad; } cases[] = {
    { "method", "guess" }, { "family", "weibull" }, { "link", "logit" }, { "se_kind", "x" }
  };
  for (size_t c = 0; c < sizeof cases / sizeof cases[0]; c++) {
    json_t *d = model_doc ();
    char p[600];
    bl_err err = { 0 };
    json_object_set_new (d, cases[c].key, json_string (cases[c].bad));
    doc_file (d, p, sizeof p);
    ck_assert_ptr_null (bl_model_read (p, &err));
    ck_assert_msg (strstr (err.msg, cases[c].key), "%s: '%s'", cases[c].key, err.msg);
    if (c == 0)
      for (int k = 0; k <= (int) BL_METHOD_WLS; k++)
        ck_assert_msg (strstr (err.msg, bl_method_name ((bl_method) k)), "method %d: %s", k,
                       err.msg);
    if (c == 1)
      for (size_t k = 0; k < bl_family_count (); k++)
        ck_assert_msg (strstr (err.msg, bl_family_name (bl_family_at (k))), "%s: %s",
                       bl_family_name (bl_family_at (k)), err.msg);
    if (c == 2) {
      ck_assert_uint_ge (bl_link_count (), 4);
      for (size_t k = 0; k < bl_link_count (); k++)
        ck_assert_msg (strstr (err.msg, bl_link_at (k)->name), "%s: %s", bl_link_at (k)->name,
                       err.msg);
    }
    if (c == 3)
      for (int k = 0; k <= (int) BL_SE_CLUSTER; k++)
        ck_assert_msg (strstr (err.msg, bl_se_kind_name ((bl_se_kind) k)), "se %d: %s", k,
                       err.msg);
  }
}
END_TEST

/* ---------------------------------------------------------------- basics */

/* The fixed levels: a level absent from the new rows keeps its (all-zero) column, and a
   numeric-looking level text is read as a level (bl_model_table_opts). */
START_TEST (model_levels_fixed)
{
  bl_prediction *p = predict_ok (&ej, "site,age,load\nmill-lane,3.2,0.5\n", 0.0, NULL,
                                 "one level");
  ck_assert_uint_eq (p->n, 1);
  ck_assert (isfinite (p->mean[0]) && p->mean[0] > 0.0);
  ck_assert (p->pred_lo[0] < p->mean[0] && p->mean[0] < p->pred_hi[0]);
  bl_prediction_free (p);
}
END_TEST

/* Out of memory: each allocation made to fail in turn (a build with --enable-alloc-fail;
   otherwise bl_alloc_count is 0 and the loop does not run). */
START_TEST (model_alloc_failures)
{
  bl_table *t = table_of (new_csv, "new.csv", ej.m);
  unsigned long total;
  bl_err err;
  bl_alloc_fail_at (0);
  bl_alloc_count ();
  bl_prediction_free (bl_model_predict (ej.m, t, 0.0, &err));
  bl_model_free (bl_model_read (ej.path, &err));
  total = bl_alloc_count ();
  for (unsigned long k = 1; k <= total; k++) {
    bl_model *m;
    bl_prediction *p = NULL;
    bl_alloc_fail_at (k);
    m = bl_model_read (ej.path, &err);
    if (m)
      p = bl_model_predict (m, t, 0.0, &err);
    bl_alloc_fail_at (0);
    ck_assert_msg ((m && p) || err.code == BL_ENOMEM, "alloc %lu: code %d (%s)", k, err.code,
                   err.msg);
    bl_prediction_free (p);
    bl_model_free (m);
  }
  bl_table_free (t);
}
END_TEST

static Suite *
model_suite (void)
{
  Suite *s = suite_create ("model");
  TCase *tc = tcase_create ("reference");
  tcase_set_timeout (tc, 300);
  tcase_add_test (tc, model_roundtrip_gamma_log);
  tcase_add_test (tc, model_roundtrip_poisson_offset);
  tcase_add_test (tc, model_roundtrip_ols);
  tcase_add_test (tc, model_roundtrip_wls_fitted_est);
  tcase_add_test (tc, model_roundtrip_boxcox);
  tcase_add_test (tc, model_roundtrip_log_sqrt);
  tcase_add_test (tc, model_roundtrip_boxcox_subsample);
  tcase_add_test (tc, model_gaussian_textbook_intervals);
  tcase_add_test (tc, model_wls_column_intervals);
  tcase_add_test (tc, model_poisson_quantiles);
  tcase_add_test (tc, model_gamma_quantiles);
  tcase_add_test (tc, model_invgauss_quantiles);
  suite_add_tcase (s, tc);
  tc = tcase_create ("identities");
  tcase_add_test (tc, model_numbers_exact);
  suite_add_tcase (s, tc);
  tc = tcase_create ("errors");
  tcase_add_checked_fixture (tc, errors_setup, errors_teardown);
  tcase_add_test (tc, model_error_missing_column);
  tcase_add_test (tc, model_error_unseen_level);
  tcase_add_test (tc, model_error_missing_cell);
  tcase_add_test (tc, model_error_domain);
  tcase_add_test (tc, model_error_not_numeric);
  tcase_add_test (tc, model_error_response_support);
  tcase_add_test (tc, model_error_mean_domain);
  tcase_add_test (tc, model_error_level);
  tcase_add_test (tc, model_error_keep);
  tcase_add_test (tc, model_csv_options);
  tcase_add_test (tc, model_error_files);
  tcase_add_test (tc, model_error_inconsistent);
  tcase_add_test (tc, model_error_covariance);
  tcase_add_test (tc, model_error_contradictions);
  tcase_add_test (tc, model_error_lists_complete);
  suite_add_tcase (s, tc);
  tc = tcase_create ("basics");
  tcase_add_checked_fixture (tc, errors_setup, errors_teardown);
  tcase_add_test (tc, model_levels_fixed);
  tcase_add_test (tc, model_alloc_failures);
  suite_add_tcase (s, tc);
  return s;
}

int
main (void)
{
  return test_run_suite (model_suite (), 0);
}
