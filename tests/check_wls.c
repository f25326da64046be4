/* check_wls.c -- weighted least squares (wls.c through fit.h): known weights, COL^K and
   fitted^K with the power fixed or estimated by maximum likelihood.

   Every fit goes through the public pipeline: table -> terms -> design -> bl_fit_new.  The
   checks, each with its source beside it:
   - reference: GSL's gsl_multifit_wlinear (an independent weighted least-squares code), and a
     direct SciPy maximization of the likelihood (tests/reference/remedies_mle.py, its output
     tests/reference/remedies_mle.txt; data tests/data/remedies.csv, invented);
   - identities: WLS with Var y proportional to x equals OLS of y/sqrt(x) on 1/sqrt(x) and
     sqrt(x) without intercept (an algebraic identity: both minimize the same sum of squares);
   - errors: every refusal of the WLS engine and of the design's variance column, and out of
     memory at every allocation of each engine;
   - basics: the resolved variance expression and the parameter count. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_multifit.h>
#include <gsl/gsl_vector.h>
#include "design.h"
#include "fit.h"
#include "table.h"
#include "terms.h"
#include "testutil.h"

/* ---------------------------------------------------------------- helpers */

/* WLS options: method wls, variance KIND on column COL (NULL for fitted), power K or est. */
static void
wls_opts (bl_fit_opts *fo, bl_variance kind, const char *col, double K, int est)
{
  bl_fit_opts_init (fo);
  fo->method = BL_METHOD_WLS;
  fo->variance = kind;
  fo->variance_col = col;
  fo->power = K;
  fo->power_est = est;
}

/* ---------------------------------------------------------------- reference */

/* GSL gsl_multifit_wlinear (an independent implementation of weighted least squares; its
   covariance is (X'WX)^-1 unscaled, so it is multiplied by sigma^2 = chisq / (n - p) with
   chisq = sum w r^2, GSL reference manual, "Linear regression" section, from memory) on
   tests/data/remedies.csv: hours on (1, load), prior weights w times load^-K, K = 1.7 fixed.
   Coefficients, standard errors and every covariance entry agree to 1e-10 relative. */
START_TEST (wls_gsl_wlinear)
{
  const double K = 1.7;
  test_job j = { 0 };
  bl_fit_opts fo;
  test_design_spec ds = { "w", NULL, "load", 0 };
  const double *y, *x, *a, *b, *se, *cov;
  size_t n;
  gsl_matrix *X, *C;
  gsl_vector *wv, *yv, *c;
  gsl_multifit_linear_workspace *ws;
  double chisq, s2, worst = 0.0;
  j.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j, "hours", "load", &ds);
  wls_opts (&fo, BL_VARIANCE_COLUMN, "load", K, 0);
  test_job_fit (&j, &fo, "gsl wlinear");
  n = bl_design_n (j.d);
  ck_assert_uint_eq (n, bl_table_nrows (j.t));
  y = test_table_col (j.t, "hours");
  x = test_table_col (j.t, "load");
  a = test_table_col (j.t, "w");
  X = gsl_matrix_alloc (n, 2);
  C = gsl_matrix_alloc (2, 2);
  wv = gsl_vector_alloc (n);
  yv = gsl_vector_alloc (n);
  c = gsl_vector_alloc (2);
  ws = gsl_multifit_linear_alloc (n, 2);
  ck_assert_msg (X && C && wv && yv && c && ws, "gsl wlinear: out of memory");
  for (size_t i = 0; i < n; i++) {
    gsl_matrix_set (X, i, 0, 1.0);
    gsl_matrix_set (X, i, 1, x[i]);
    gsl_vector_set (wv, i, a[i] * pow (x[i], -K));
    gsl_vector_set (yv, i, y[i]);
  }
  ck_assert_int_eq (gsl_multifit_wlinear (X, wv, yv, c, C, &chisq, ws), GSL_SUCCESS);
  s2 = chisq / (double) (n - 2);
  b = bl_fit_beta (j.f);
  se = bl_fit_se (j.f);
  cov = bl_fit_cov (j.f);
  for (size_t k = 0; k < 2; k++) {
    const double sek = sqrt (s2 * gsl_matrix_get (C, k, k));
    worst = fmax (worst, fmax (test_rel (b[k], gsl_vector_get (c, k)), test_rel (se[k], sek)));
    ck_assert_msg (test_rel (b[k], gsl_vector_get (c, k)) <= 1e-10, "gsl wlinear b%zu %.17g, gsl "
                   "%.17g", k, b[k], gsl_vector_get (c, k));
    ck_assert_msg (test_rel (se[k], sek) <= 1e-10, "gsl wlinear se%zu %.17g, gsl %.17g", k, se[k],
                   sek);
    for (size_t l = 0; l < 2; l++) {
      const double g = s2 * gsl_matrix_get (C, k, l);
      const double d = fabs (cov[k + 2 * l] - g) / sqrt (s2 * s2 * gsl_matrix_get (C, k, k)
                                                         * gsl_matrix_get (C, l, l));
      ck_assert_msg (d <= 1e-10, "gsl wlinear cov[%zu,%zu] %.17g, gsl %.17g", k, l,
                     cov[k + 2 * l], g);
    }
  }
  /* the deviance of a WLS fit is chisq = sum w r^2 */
  ck_assert_msg (test_rel (bl_fit_stats_get (j.f)->deviance, chisq) <= 1e-10,
                 "gsl wlinear deviance %.17g, chisq %.17g", bl_fit_stats_get (j.f)->deviance,
                 chisq);
  fprintf (stderr, "wls gsl wlinear: worst relative difference %.2e\n", worst);
  gsl_multifit_linear_free (ws);
  gsl_vector_free (c);
  gsl_vector_free (yv);
  gsl_vector_free (wv);
  gsl_matrix_free (C);
  gsl_matrix_free (X);
  test_job_free (&j);
}
END_TEST

/* SciPy (tests/reference/remedies_mle.txt, case fitted_est): direct maximization of
     l(b, K) = -n/2 (log(2 pi S/n) + 1) + 1/2 sum log w_i,  w_i = a_i mu_i^-K,
     S = sum w_i r_i^2, mu = X b
   on tests/data/remedies.csv (hours on load, a = w), with K's standard error from the inverse
   observed information of the full likelihood in (b, K, log sigma).  loglik to 1e-8 relative,
   K to 1e-5, beta to 1e-6 (|ref| + se), power_se and se to 1e-3 relative (ballast takes its
   Hessian by finite differences of the analytic gradient). */
START_TEST (wls_scipy_fitted_est)
{
  test_job j = { 0 };
  bl_fit_opts fo;
  test_design_spec ds = { "w", NULL, NULL, 0 };
  double rb[2], rse[2];
  const double rK = test_remedies_ref1 ("fitted_est", "K");
  const double rKse = test_remedies_ref1 ("fitted_est", "K_se");
  const double rl = test_remedies_ref1 ("fitted_est", "loglik");
  const bl_fit_variance_info *v;
  const bl_fit_stats *st;
  const double *b, *se;
  test_remedies_ref ("fitted_est", "beta", rb, 2);
  test_remedies_ref ("fitted_est", "se_observed", rse, 2);
  j.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j, "hours", "load", &ds);
  wls_opts (&fo, BL_VARIANCE_FITTED, NULL, 0.0, 1);
  test_job_fit (&j, &fo, "fitted^est");
  v = bl_fit_variance (j.f);
  st = bl_fit_stats_get (j.f);
  b = bl_fit_beta (j.f);
  se = bl_fit_se (j.f);
  fprintf (stderr, "wls fitted^est: K %.10f (ref %.10f, diff %.2e), loglik rel %.2e, b0 %.2e, "
           "b1 %.2e (in |ref| + se), power_se rel %.2e, se rel %.2e %.2e\n", v->power, rK,
           v->power - rK, test_rel (st->loglik, rl), fabs (b[0] - rb[0]) / (fabs (rb[0]) + se[0]),
           fabs (b[1] - rb[1]) / (fabs (rb[1]) + se[1]), test_rel (v->power_se, rKse),
           test_rel (se[0], rse[0]), test_rel (se[1], rse[1]));
  ck_assert_msg (test_rel (st->loglik, rl) <= 1e-8, "fitted^est loglik %.17g, ref %.17g",
                 st->loglik, rl);
  ck_assert_msg (fabs (v->power - rK) <= 1e-5, "fitted^est K %.17g, ref %.17g", v->power, rK);
  for (size_t k = 0; k < 2; k++) {
    ck_assert_msg (fabs (b[k] - rb[k]) <= 1e-6 * (fabs (rb[k]) + se[k]),
                   "fitted^est b%zu %.17g, ref %.17g", k, b[k], rb[k]);
    ck_assert_msg (test_rel (se[k], rse[k]) <= 1e-3, "fitted^est se%zu %.17g, ref %.17g", k, se[k],
                   rse[k]);
  }
  ck_assert_msg (test_rel (v->power_se, rKse) <= 1e-3, "fitted^est power_se %.17g, ref %.17g",
                 v->power_se, rKse);
  ck_assert_int_eq (v->power_estimated, 1);
  ck_assert_int_eq (v->kind, BL_VARIANCE_FITTED);
  ck_assert_msg (!test_fit_has_warning (j.f, "did not settle"), "fitted^est: feasible WLS did not "
                 "settle");
  /* k = rank + 1 (sigma) + 1 (K) */
  ck_assert_uint_eq (st->k, 4);
  ck_assert_msg (test_rel (st->aic, -2.0 * rl + 8.0) <= 1e-8, "fitted^est aic %.17g", st->aic);
  test_job_free (&j);
}
END_TEST

/* SciPy (tests/reference/remedies_mle.txt, case col_est): the profile l(K) of WLS with
   Var hours_i = sigma^2 load_i^K / w_i, maximized in one dimension (minimize_scalar), K's
   standard error from the full (b, K, log sigma) observed information.  K to 1e-5, loglik to
   1e-8 relative, beta to 1e-6 (|ref| + se), power_se to 1e-3 relative. */
START_TEST (wls_scipy_col_est)
{
  test_job j = { 0 };
  bl_fit_opts fo;
  test_design_spec ds = { "w", NULL, "load", 0 };
  double rb[2];
  const double rK = test_remedies_ref1 ("col_est", "K");
  const double rKse = test_remedies_ref1 ("col_est", "K_se");
  const double rl = test_remedies_ref1 ("col_est", "loglik");
  const bl_fit_variance_info *v;
  const bl_fit_stats *st;
  const double *b, *se;
  test_remedies_ref ("col_est", "beta", rb, 2);
  j.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j, "hours", "load", &ds);
  wls_opts (&fo, BL_VARIANCE_COLUMN, "load", 0.0, 1);
  test_job_fit (&j, &fo, "load^est");
  v = bl_fit_variance (j.f);
  st = bl_fit_stats_get (j.f);
  b = bl_fit_beta (j.f);
  se = bl_fit_se (j.f);
  fprintf (stderr, "wls load^est: K %.10f (ref %.10f, diff %.2e), loglik rel %.2e, b0 %.2e, "
           "b1 %.2e (in |ref| + se), power_se rel %.2e\n", v->power, rK, v->power - rK,
           test_rel (st->loglik, rl), fabs (b[0] - rb[0]) / (fabs (rb[0]) + se[0]),
           fabs (b[1] - rb[1]) / (fabs (rb[1]) + se[1]), test_rel (v->power_se, rKse));
  ck_assert_msg (fabs (v->power - rK) <= 1e-5, "load^est K %.17g, ref %.17g", v->power, rK);
  ck_assert_msg (test_rel (st->loglik, rl) <= 1e-8, "load^est loglik %.17g, ref %.17g", st->loglik,
                 rl);
  for (size_t k = 0; k < 2; k++)
    ck_assert_msg (fabs (b[k] - rb[k]) <= 1e-6 * (fabs (rb[k]) + se[k]),
                   "load^est b%zu %.17g, ref %.17g", k, b[k], rb[k]);
  ck_assert_msg (test_rel (v->power_se, rKse) <= 1e-3, "load^est power_se %.17g, ref %.17g",
                 v->power_se, rKse);
  ck_assert_uint_eq (st->k, 4);
  ck_assert_int_eq (v->kind, BL_VARIANCE_COLUMN);
  test_job_free (&j);
}
END_TEST

/* ---------------------------------------------------------------- identities */

/* Algebraic identity (Var y_i = sigma^2 x_i gives w_i = 1/x_i, and
   sum w_i (y_i - b0 - b1 x_i)^2 = sum (y_i/sqrt(x_i) - b0/sqrt(x_i) - b1 sqrt(x_i))^2, common
   practice, no source): WLS of y on (1, x) with --variance x^1 equals OLS of y/sqrt(x) on
   1/sqrt(x) and sqrt(x) without intercept, in coefficients and standard errors (the residual
   sums of squares and dofs are the same) to 1e-10 relative.  The log-likelihoods differ by the
   Jacobian of y -> y/sqrt(x): l_wls = l_ols - 1/2 sum log x. */
START_TEST (wls_equals_scaled_ols)
{
  const size_t n = 37;
  test_buf c1 = { 0 }, c2 = { 0 };
  test_job j1 = { 0 }, j2 = { 0 };
  bl_fit_opts fo, fo2;
  test_design_spec ds1 = { NULL, NULL, "x", 0 }, ds2 = { NULL, NULL, NULL, 1 };
  const double *x, *y, *b1, *b2, *s1, *s2;
  long double slx = 0.0L;
  double worst = 0.0;
  size_t iu, iv;
  test_buf_printf (&c1, "y,x\n");
  for (size_t i = 0; i < n; i++) {
    const double xi = 0.55 + 0.371 * (double) i + 0.05 * sin (3.1 * (double) i);
    const double yi = 2.385 + 1.73 * xi + 0.61 * sqrt (xi) * sin (1.7 * (double) i + 0.3);
    test_buf_printf (&c1, "%.17g,%.17g\n", yi, xi);
  }
  j1.t = test_table_mem (c1.s, c1.len, "wls.csv", NULL, 0);
  y = test_table_col (j1.t, "y");
  x = test_table_col (j1.t, "x");
  test_buf_printf (&c2, "ys,u,v\n");
  for (size_t i = 0; i < n; i++) {
    test_buf_printf (&c2, "%.17g,%.17g,%.17g\n", y[i] / sqrt (x[i]), 1.0 / sqrt (x[i]),
                     sqrt (x[i]));
    slx += log (x[i]);
  }
  j2.t = test_table_mem (c2.s, c2.len, "scaled.csv", NULL, 0);
  test_job_design_spec (&j1, "y", "x", &ds1);
  test_job_design_spec (&j2, "ys", "u, v", &ds2);
  wls_opts (&fo, BL_VARIANCE_COLUMN, "x", 1.0, 0);
  test_job_fit (&j1, &fo, "wls x^1");
  bl_fit_opts_init (&fo2);
  fo2.method = BL_METHOD_OLS;
  test_job_fit (&j2, &fo2, "scaled ols");
  b1 = bl_fit_beta (j1.f);
  s1 = bl_fit_se (j1.f);
  b2 = bl_fit_beta (j2.f);
  s2 = bl_fit_se (j2.f);
  iu = test_design_col (j2.d, "u");
  iv = test_design_col (j2.d, "v");
  {
    const size_t i0 = test_design_col (j1.d, "intercept"), i1 = test_design_col (j1.d, "x");
    const double pairs[4][2] = { { b1[i0], b2[iu] }, { b1[i1], b2[iv] }, { s1[i0], s2[iu] },
                                 { s1[i1], s2[iv] } };
    static const char *const name[4] = { "b0", "b1", "se0", "se1" };
    for (size_t k = 0; k < 4; k++) {
      worst = fmax (worst, test_rel (pairs[k][0], pairs[k][1]));
      ck_assert_msg (test_rel (pairs[k][0], pairs[k][1]) <= 1e-10, "wls x^1 %s %.17g, scaled ols "
                     "%.17g", name[k], pairs[k][0], pairs[k][1]);
    }
  }
  {
    const double l1 = bl_fit_stats_get (j1.f)->loglik, l2 = bl_fit_stats_get (j2.f)->loglik;
    const double want = l2 - 0.5 * (double) slx;
    ck_assert_msg (test_rel (l1, want) <= 1e-10,
                   "wls x^1 loglik %.17g, scaled ols - 1/2 sum log x %.17g", l1, want);
  }
  fprintf (stderr, "wls x^1 = scaled ols: worst relative difference %.2e\n", worst);
  ck_assert_str_eq (bl_fit_variance (j1.f)->expr, "x^1");
  ck_assert_int_eq (bl_fit_method (j1.f), BL_METHOD_WLS);
  test_job_free (&j1);
  test_job_free (&j2);
  free (c1.s);
  free (c2.s);
}
END_TEST

/* Known weights only (--method wls --weights w): WLS is the gaussian GLM with prior weights
   (both minimize sum a_i r_i^2; common practice, no source), bit for bit in b and se. */
START_TEST (wls_known_weights)
{
  test_job j1 = { 0 }, j2 = { 0 };
  bl_fit_opts fo, fg;
  test_design_spec ds = { "w", NULL, NULL, 0 };
  j1.t = test_table_file ("remedies.csv", NULL, 0);
  j2.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j1, "hours", "load", &ds);
  test_job_design_spec (&j2, "hours", "load", &ds);
  wls_opts (&fo, BL_VARIANCE_NONE, NULL, 0.0, 0);
  test_job_fit (&j1, &fo, "wls weights");
  bl_fit_opts_init (&fg);
  test_job_fit (&j2, &fg, "glm weights");
  for (size_t k = 0; k < 2; k++) {
    ck_assert_msg (test_rel (bl_fit_beta (j1.f)[k], bl_fit_beta (j2.f)[k]) <= 1e-13,
                   "wls weights b%zu", k);
    ck_assert_msg (test_rel (bl_fit_se (j1.f)[k], bl_fit_se (j2.f)[k]) <= 1e-13,
                   "wls weights se%zu", k);
  }
  ck_assert_int_eq (bl_fit_method (j1.f), BL_METHOD_WLS);
  ck_assert_str_eq (bl_fit_variance (j1.f)->expr, "");
  test_job_free (&j1);
  test_job_free (&j2);
}
END_TEST

/* ---------------------------------------------------------------- errors */

/* fitted^K needs positive fitted means (wls.c): a falling line whose OLS fit goes below 0 is
   refused with BL_EDATA, where = FILE:LINE of the first row with a fitted mean <= 0, and the
   message says "fitted". */
START_TEST (wls_error_fitted_nonpositive)
{
  test_buf c = { 0 };
  test_job j = { 0 }, o = { 0 };
  bl_fit_opts fo, fols;
  bl_err err = { 0 };
  bl_fit *f;
  char where[64];
  size_t first = 0;
  const double *mu;
  test_buf_printf (&c, "y,x\n");
  for (size_t i = 0; i < 20; i++) {
    const double xi = 0.5 + 0.4 * (double) i;
    test_buf_printf (&c, "%.6f,%.4f\n", 5.2 - 1.1 * xi + 0.3 * sin (2.3 * (double) i), xi);
  }
  j.t = test_table_mem (c.s, c.len, "falling.csv", NULL, 0);
  o.t = test_table_mem (c.s, c.len, "falling.csv", NULL, 0);
  test_job_design_spec (&j, "y", "x", NULL);
  test_job_design_spec (&o, "y", "x", NULL);
  bl_fit_opts_init (&fols);
  fols.method = BL_METHOD_OLS;
  test_job_fit (&o, &fols, "falling ols");
  mu = bl_fit_mu (o.f);
  while (first < 20 && mu[first] > 0.0)
    first++;
  ck_assert_msg (first < 20, "falling: the OLS fit stays positive");
  snprintf (where, sizeof where, "falling.csv:%zu", first + 2);
  wls_opts (&fo, BL_VARIANCE_FITTED, NULL, 1.0, 0);
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_EDATA, where, "fitted", "<= 0", "fitted^1 with mu <= 0");
  ck_assert_str_eq (err.where, where);
  wls_opts (&fo, BL_VARIANCE_FITTED, NULL, 0.0, 1);
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_EDATA, where, "fitted", NULL, "fitted^est with mu <= 0");
  test_job_free (&j);
  test_job_free (&o);
  free (c.s);
}
END_TEST

/* A variance column with a value <= 0 (design.h): BL_EDATA naming the row (FILE:LINE) and
   the column; the first bad used row is reported. */
START_TEST (wls_error_varcol_nonpositive)
{
  static const char csv[] = "y,x,v\n3.1,1.2,0.8\n4.4,2.3,1.7\nNA,2.9,-4\n5.9,3.1,0\n"
                            "6.2,3.8,-1.5\n";
  test_job j = { 0 };
  bl_err err = { 0 };
  test_design_spec ds = { NULL, NULL, "v", 0 };
  j.t = test_table_mem (csv, strlen (csv), "var.csv", NULL, 0);
  test_expect_fail (test_job_design_spec_try (&j, "y", "x", &ds, &err), &err, BL_EDATA,
                    "var.csv:5", "'v'", "not > 0", "variance column 0");
  ck_assert_msg (strncmp (err.where, "var.csv:5", 9) == 0, "variance column: where '%s'",
                 err.where);
  test_job_free (&j);
  /* a variance column that is not in the table */
  j.t = test_table_mem (csv, strlen (csv), "var.csv", NULL, 0);
  ds.variance = "load";
  test_expect_fail (test_job_design_spec_try (&j, "y", "x", &ds, &err), &err, BL_ESPEC,
                    "--variance", "'load'", NULL, "variance column absent");
  test_job_free (&j);
}
END_TEST

/* Option combinations the WLS engine refuses (wls.c): an offset, a non-gaussian family or a
   non-identity link (BL_ESPEC), and COL^K without a variance column in the design. */
START_TEST (wls_error_options)
{
  bl_fit_opts fo;
  bl_err err = { 0 };
  test_job j = { 0 };
  test_design_spec ds = { "w", "log(load)", "load", 0 };
  bl_fit *f;
  j.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j, "hours", "load", &ds);
  wls_opts (&fo, BL_VARIANCE_COLUMN, "load", 1.0, 0);
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_ESPEC, "--offset", "offset", "wls", "wls with an offset");
  test_job_free (&j);

  j.t = test_table_file ("remedies.csv", NULL, 0);
  ds.offset = NULL;
  test_job_design_spec (&j, "hours", "load", &ds);
  wls_opts (&fo, BL_VARIANCE_COLUMN, "load", 1.0, 0);
  fo.fam = &bl_family_gamma;
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_ESPEC, "--method", "wls", "--family", "wls with gamma");
  wls_opts (&fo, BL_VARIANCE_COLUMN, "load", 1.0, 0);
  fo.link = &bl_link_log;
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_ESPEC, "--method", "identity", NULL, "wls with a log link");
  test_job_free (&j);

  j.t = test_table_file ("remedies.csv", NULL, 0);
  ds.variance = NULL;
  test_job_design_spec (&j, "hours", "load", &ds);
  wls_opts (&fo, BL_VARIANCE_COLUMN, "load", 1.0, 0);
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_ESPEC, "--variance", "no variance column", NULL,
                    "COL^K without a column");
  test_job_free (&j);
}
END_TEST

/* COL^est where the profile keeps rising to the end of [BL_WLS_POWER_MIN, BL_WLS_POWER_MAX]:
   the spread grows like x^5 (variance like x^10, K = 10 > 6), so the maximum lies at the
   upper end and K is refused as not identified (BL_ENOCONV, where "--variance"). */
START_TEST (wls_error_power_not_identified)
{
  test_buf c = { 0 };
  test_job j = { 0 };
  bl_fit_opts fo;
  bl_err err = { 0 };
  test_design_spec ds = { NULL, NULL, "x", 0 };
  bl_fit *f;
  test_buf_printf (&c, "y,x\n");
  for (size_t i = 0; i < 40; i++) {
    const double xi = 1.0 + 0.23 * (double) i;
    test_buf_printf (&c, "%.17g,%.17g\n", 1.3 + xi + 1e-3 * pow (xi, 5.0) * sin (2.1 * (double) i),
                     xi);
  }
  j.t = test_table_mem (c.s, c.len, "wide.csv", NULL, 0);
  test_job_design_spec (&j, "y", "x", &ds);
  wls_opts (&fo, BL_VARIANCE_COLUMN, "x", 0.0, 1);
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_ENOCONV, "--variance", "not identified", "range",
                    "x^est not identified");
  test_job_free (&j);
  free (c.s);
}
END_TEST

/* Allocation failures (DEVELOPERS.md, "Tests"; SQLite's malloc tests): on
   tests/data/remedies.csv (80 rows), hours on (1, load) with prior weights w, the N-th
   allocation fails for N = 1, 2, ... until the fit succeeds: every failure is NULL with
   BL_ENOMEM and a message about memory (never a crash or another code), nothing leaks (the
   sanitizer build's leak check at exit), and the first success is the fit made without
   injection, bit for bit (test_alloc_fail_fit).  One case per WLS engine: known weights,
   COL^K with K estimated (the profile search), fitted^K with K fixed and estimated (feasible
   WLS and the joint Newton maximization).  A no-op without --enable-alloc-fail. */
static const struct {
  const char *what, *varcol;
  bl_variance kind;
  double K;
  int est;
} wls_nomem_case[] = {
  { "wls nomem: known weights", NULL, BL_VARIANCE_NONE, 0.0, 0 },
  { "wls nomem: load^est", "load", BL_VARIANCE_COLUMN, 0.0, 1 },
  { "wls nomem: fitted^2", NULL, BL_VARIANCE_FITTED, 2.0, 0 },
  { "wls nomem: fitted^est", NULL, BL_VARIANCE_FITTED, 0.0, 1 }
};

START_TEST (wls_error_alloc_failure)
{
  test_job j = { 0 };
  bl_fit_opts fo;
  test_design_spec ds = { "w", NULL, wls_nomem_case[_i].varcol, 0 };
  unsigned long n;
  j.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j, "hours", "load", &ds);
  wls_opts (&fo, wls_nomem_case[_i].kind, wls_nomem_case[_i].varcol, wls_nomem_case[_i].K,
            wls_nomem_case[_i].est);
  n = test_alloc_fail_fit (wls_nomem_case[_i].what, j.d, &fo, 1000000);
  /* every engine allocates at least the fit's own tables (fit.c alloc_tables: 12 arrays) */
  ck_assert_msg (n == 0 || n > 12, "%s: the loop ended at N = %lu", wls_nomem_case[_i].what, n);
  test_job_free (&j);
}
END_TEST

/* ---------------------------------------------------------------- basics */

/* The resolved expression and the parameter count: a fixed power prints as given and
   counts k = rank + 1; the power_se of a fixed power is NAN. */
START_TEST (wls_expr_and_k)
{
  test_job j = { 0 };
  bl_fit_opts fo;
  test_design_spec ds = { "w", NULL, "load", 0 };
  const bl_fit_variance_info *v;
  j.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j, "hours", "load", &ds);
  wls_opts (&fo, BL_VARIANCE_COLUMN, "load", 1.7, 0);
  test_job_fit (&j, &fo, "load^1.7");
  v = bl_fit_variance (j.f);
  ck_assert_str_eq (v->expr, "load^1.7");
  ck_assert_msg (isnan (v->power_se), "load^1.7: power_se %g", v->power_se);
  ck_assert_int_eq (v->power_estimated, 0);
  ck_assert_uint_eq (bl_fit_stats_get (j.f)->k, 3);
  ck_assert_str_eq (bl_method_name (bl_fit_method (j.f)), "wls");
  test_job_free (&j);
  j.t = test_table_file ("remedies.csv", NULL, 0);
  ds.variance = NULL;
  test_job_design_spec (&j, "hours", "load", &ds);
  wls_opts (&fo, BL_VARIANCE_FITTED, NULL, 2.0, 0);
  test_job_fit (&j, &fo, "fitted^2");
  v = bl_fit_variance (j.f);
  ck_assert_str_eq (v->expr, "fitted^2");
  ck_assert_uint_eq (bl_fit_stats_get (j.f)->k, 3);
  ck_assert_msg (isnan (v->power_se), "fitted^2: power_se %g", v->power_se);
  test_job_free (&j);
}
END_TEST

static Suite *
wls_suite (void)
{
  Suite *s = suite_create ("wls");
  TCase *ref = tcase_create ("reference");
  TCase *idt = tcase_create ("identities");
  TCase *err = tcase_create ("errors");
  TCase *bas = tcase_create ("basics");
  tcase_add_test (ref, wls_gsl_wlinear);
  tcase_add_test (ref, wls_scipy_fitted_est);
  tcase_add_test (ref, wls_scipy_col_est);
  tcase_add_test (idt, wls_equals_scaled_ols);
  tcase_add_test (idt, wls_known_weights);
  tcase_add_test (err, wls_error_fitted_nonpositive);
  tcase_add_test (err, wls_error_varcol_nonpositive);
  tcase_add_test (err, wls_error_options);
  tcase_add_test (err, wls_error_power_not_identified);
  tcase_add_loop_test (err, wls_error_alloc_failure, 0,
                       (int) (sizeof wls_nomem_case / sizeof wls_nomem_case[0]));
  tcase_add_test (bas, wls_expr_and_k);
  tcase_set_timeout (ref, 120);
  tcase_set_timeout (idt, 120);
  tcase_set_timeout (err, 120);
  tcase_set_timeout (bas, 120);
  suite_add_tcase (s, ref);
  suite_add_tcase (s, idt);
  suite_add_tcase (s, err);
  suite_add_tcase (s, bas);
  return s;
}

int
main (void)
{
  return test_run_suite (wls_suite (), 1);
}
