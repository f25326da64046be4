/* check_vcov.c -- heteroscedasticity-consistent (sandwich) covariance, HC0-HC3 (vcov.c
   through fit.h), for OLS, WLS and GLM fits.

   Every fit goes through the public pipeline: table -> terms -> design -> bl_fit_new.  The
   checks, each with its source beside it:
   - reference: the sandwich formula computed here by direct matrix algebra with GSL
     (X, W, residuals, (X'WX)^-1 by Cholesky, the leverages one by one):
       cov = B^-1 [sum_i c_i (w_i e_i)^2 x_i x_i'] B^-1,  B = X'WX,  h_i = w_i x_i' B^-1 x_i,
       c_i = 1 (HC0), n/(n - p) (HC1), 1/(1 - h_i) (HC2), 1/(1 - h_i)^2 (HC3)
     (White 1980, Econometrica 48, 817-838; MacKinnon & White 1985, J. Econometrics 29,
     305-325), with e_i the working residual and w_i the working weight for a GLM;
   - identities: closed forms for a binary regressor (HC2 = the unpooled two-sample variance)
     and for the intercept-only model;
   - errors: leverage 1 with hc2/hc3;
   - basics: the se_kind names. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_vector.h>
#include "design.h"
#include "fit.h"
#include "table.h"
#include "terms.h"
#include "testutil.h"

/* ---------------------------------------------------------------- helpers */


/* The sandwich of kind K (1..4 = HC0..HC3) by direct matrix algebra: X is n x p (from the
   table, not the design), W the working weights, E the working residuals; the result goes to
   OUT (p x p, row-major).  Returns the largest leverage. */
static double
sandwich_direct (const gsl_matrix *X, const double *W, const double *E, int K, double *out)
{
  const size_t n = X->size1, p = X->size2;
  gsl_matrix *B = gsl_matrix_calloc (p, p), *M = gsl_matrix_calloc (p, p);
  gsl_matrix *T = gsl_matrix_alloc (p, p), *C = gsl_matrix_alloc (p, p);
  gsl_vector *g = gsl_vector_alloc (p);
  double hmax = 0.0;
  ck_assert_msg (B && M && T && C && g, "sandwich_direct: out of memory");
  for (size_t i = 0; i < n; i++) {
    gsl_vector_const_view xi = gsl_matrix_const_row (X, i);
    gsl_blas_dsyr (CblasLower, W[i], &xi.vector, B);
  }
  ck_assert_int_eq (gsl_linalg_cholesky_decomp1 (B), GSL_SUCCESS);
  ck_assert_int_eq (gsl_linalg_cholesky_invert (B), GSL_SUCCESS);   /* B := (X'WX)^-1 */
  for (size_t i = 0; i < n; i++) {
    gsl_vector_const_view xi = gsl_matrix_const_row (X, i);
    double h, c;
    gsl_blas_dsymv (CblasLower, 1.0, B, &xi.vector, 0.0, g);
    gsl_blas_ddot (&xi.vector, g, &h);
    h *= W[i];
    hmax = fmax (hmax, h);
    switch (K) {
    case 2: c = (double) n / (double) (n - p); break;
    case 3: c = 1.0 / (1.0 - h); break;
    case 4: c = 1.0 / ((1.0 - h) * (1.0 - h)); break;
    default: c = 1.0; break;
    }
    gsl_blas_dsyr (CblasLower, c * W[i] * E[i] * W[i] * E[i], &xi.vector, M);
  }
  for (size_t j = 0; j < p; j++)            /* complete the symmetric lower triangles */
    for (size_t k = 0; k < j; k++) {
      gsl_matrix_set (B, k, j, gsl_matrix_get (B, j, k));
      gsl_matrix_set (M, k, j, gsl_matrix_get (M, j, k));
    }
  gsl_blas_dgemm (CblasNoTrans, CblasNoTrans, 1.0, B, M, 0.0, T);
  gsl_blas_dgemm (CblasNoTrans, CblasNoTrans, 1.0, T, B, 0.0, C);
  for (size_t j = 0; j < p; j++)
    for (size_t k = 0; k < p; k++)
      out[j * p + k] = gsl_matrix_get (C, j, k);
  gsl_vector_free (g);
  gsl_matrix_free (C);
  gsl_matrix_free (T);
  gsl_matrix_free (M);
  gsl_matrix_free (B);
  return hmax;
}

/* Compare the covariance of F (column-major, from the fit) with the direct one (row-major):
   diagonal entries relative, off-diagonal relative to sqrt(c_jj c_kk); returns the worst. */
static double
cov_compare (const bl_fit *f, const double *direct, size_t p, double tol, const char *what)
{
  const double *cv = bl_fit_cov (f);
  double worst = 0.0;
  for (size_t j = 0; j < p; j++)
    for (size_t k = 0; k < p; k++) {
      const double want = direct[j * p + k];
      const double d = fabs (cv[j + k * p] - want)
                       / sqrt (direct[j * p + j] * direct[k * p + k]);
      worst = fmax (worst, d);
      ck_assert_msg (d <= tol, "%s cov[%zu,%zu] %.17g, direct %.17g (rel %.2e)", what, j, k,
                     cv[j + k * p], want, d);
    }
  for (size_t j = 0; j < p; j++)
    ck_assert_msg (test_rel (bl_fit_se (f)[j], sqrt (direct[j * p + j])) <= tol, "%s se%zu",
                   what, j);
  return worst;
}

static const char *const kind_name[5] = { "model", "hc0", "hc1", "hc2", "hc3" };

/* ---------------------------------------------------------------- reference */

/* OLS and WLS (least squares, working weight w_i = prior weight, working residual
   e_i = y_i - mu_i) on tests/data/remedies.csv, hours on (1, load): unweighted OLS, OLS with
   prior weights w, and WLS with Var proportional to load^1.7 (w_i = a_i load_i^-1.7), each
   HC0-HC3 against the direct sandwich, to 1e-10 relative.  mu is taken from the fit's beta
   through X from the table. */
START_TEST (vcov_ols_direct)
{
  static const struct { const char *weights, *variance; double K; const char *name; } cs[] = {
    { NULL, NULL, 0.0, "ols" }, { "w", NULL, 0.0, "weighted ols" },
    { "w", "load", 1.7, "wls load^1.7" }
  };
  for (size_t c = 0; c < sizeof cs / sizeof cs[0]; c++)
    for (int K = 1; K <= 4; K++) {
      test_job j = { 0 };
      bl_fit_opts fo;
      test_design_spec ds = { cs[c].weights, NULL, cs[c].variance, 0 };
      const double *y, *x, *a, *b;
      size_t n;
      gsl_matrix *X;
      double *W, *E, direct[4], worst;
      char what[64];
      snprintf (what, sizeof what, "%s %s", cs[c].name, kind_name[K]);
      j.t = test_table_file ("remedies.csv", NULL, 0);
      test_job_design_spec (&j, "hours", "load", &ds);
      bl_fit_opts_init (&fo);
      fo.method = cs[c].variance ? BL_METHOD_WLS : BL_METHOD_OLS;
      fo.variance = cs[c].variance ? BL_VARIANCE_COLUMN : BL_VARIANCE_NONE;
      fo.variance_col = cs[c].variance;
      fo.power = cs[c].K;
      fo.se = (bl_se_kind) K;
      test_job_fit (&j, &fo, what);
      ck_assert_str_eq (bl_fit_stats_get (j.f)->se_kind, kind_name[K]);
      n = bl_table_nrows (j.t);
      y = test_table_col (j.t, "hours");
      x = test_table_col (j.t, "load");
      a = test_table_col (j.t, "w");
      b = bl_fit_beta (j.f);
      X = gsl_matrix_alloc (n, 2);
      W = malloc (n * sizeof *W);
      E = malloc (n * sizeof *E);
      ck_assert_msg (X && W && E, "%s: out of memory", what);
      for (size_t i = 0; i < n; i++) {
        gsl_matrix_set (X, i, 0, 1.0);
        gsl_matrix_set (X, i, 1, x[i]);
        W[i] = (cs[c].weights ? a[i] : 1.0) * (cs[c].variance ? pow (x[i], -cs[c].K) : 1.0);
        E[i] = y[i] - (b[0] + b[1] * x[i]);
      }
      sandwich_direct (X, W, E, K, direct);
      worst = cov_compare (j.f, direct, 2, 1e-10, what);
      fprintf (stderr, "vcov %s: worst relative difference %.2e\n", what, worst);
      free (W);
      free (E);
      gsl_matrix_free (X);
      test_job_free (&j);
    }
}
END_TEST

/* Poisson, log link, prior weights (tests/data/mle_counts.csv, tests/reference/README.md):
   y on (1, x1, x2).  Working weight w_i = a_i mu_i and working residual
   e_i = (y_i - mu_i)/mu_i (McCullagh & Nelder 1989, ch. 2: w = a (dmu/deta)^2 / V(mu),
   e = (y - mu) / (dmu/deta)), mu_i = exp(x_i' beta) from the fit's beta; HC0-HC3 against the
   direct sandwich to 1e-10 relative. */
START_TEST (vcov_poisson_direct)
{
  for (int K = 1; K <= 4; K++) {
    test_job j = { 0 };
    bl_fit_opts fo;
    test_design_spec ds = { "w", NULL, NULL, 0 };
    const double *y, *x1, *x2, *a, *b;
    size_t n, i0, i1, i2;
    gsl_matrix *X;
    double *W, *E, direct[9], worst;
    char what[64];
    snprintf (what, sizeof what, "poisson log %s", kind_name[K]);
    j.t = test_table_file ("mle_counts.csv", NULL, 0);
    test_job_design_spec (&j, "y", "x1, x2", &ds);
    bl_fit_opts_init (&fo);
    fo.fam = &bl_family_poisson;
    fo.link = &bl_link_log;
    fo.se = (bl_se_kind) K;
    test_job_fit (&j, &fo, what);
    n = bl_table_nrows (j.t);
    y = test_table_col (j.t, "y");
    x1 = test_table_col (j.t, "x1");
    x2 = test_table_col (j.t, "x2");
    a = test_table_col (j.t, "w");
    b = bl_fit_beta (j.f);
    i0 = test_design_col (j.d, "intercept");
    i1 = test_design_col (j.d, "x1");
    i2 = test_design_col (j.d, "x2");
    ck_assert_msg (i0 == 0 && i1 == 1 && i2 == 2, "%s: column order", what);
    X = gsl_matrix_alloc (n, 3);
    W = malloc (n * sizeof *W);
    E = malloc (n * sizeof *E);
    ck_assert_msg (X && W && E, "%s: out of memory", what);
    for (size_t i = 0; i < n; i++) {
      const double mu = exp (b[0] + b[1] * x1[i] + b[2] * x2[i]);
      gsl_matrix_set (X, i, 0, 1.0);
      gsl_matrix_set (X, i, 1, x1[i]);
      gsl_matrix_set (X, i, 2, x2[i]);
      W[i] = a[i] * mu;
      E[i] = (y[i] - mu) / mu;
    }
    sandwich_direct (X, W, E, K, direct);
    worst = cov_compare (j.f, direct, 3, 1e-10, what);
    fprintf (stderr, "vcov %s: worst relative difference %.2e\n", what, worst);
    ck_assert_int_eq (bl_fit_stats_get (j.f)->wald_is_t, 0);
    free (W);
    free (E);
    gsl_matrix_free (X);
    test_job_free (&j);
  }
}
END_TEST

/* ---------------------------------------------------------------- identities */

/* One binary regressor (intercept + indicator d): the indicator's coefficient is the
   difference of the group means, and its HC2 standard error is
   sqrt(s1^2/n1 + s0^2/n0), s_g^2 the sample variances with n_g - 1 denominators (the
   leverage of each row is 1/n_g; Imbens & Kolesar 2016, Rev. Econ. Stat. 98, 701-712, from
   memory).  HC0 gives the same with n_g^2 denominators: sqrt(SS1/n1^2 + SS0/n0^2).  Both to
   1e-10 relative, with unequal groups n1 = 7, n0 = 11. */
START_TEST (vcov_hc2_two_groups)
{
  static const double y1[7] = { 4.385, 6.12, 3.07, 7.93, 5.48, 2.716, 6.604 };
  static const double y0[11] = { 2.19, 3.41, 1.876, 2.95, 4.23, 3.33, 1.52, 2.707, 3.98,
                                 2.44, 3.115 };
  char csv[1024];
  size_t len = (size_t) snprintf (csv, sizeof csv, "y,d\n");
  long double m1 = 0, m0 = 0, ss1 = 0, ss0 = 0;
  double want2, want0;
  for (size_t i = 0; i < 11; i++) {
    if (i < 7)
      len += (size_t) snprintf (csv + len, sizeof csv - len, "%.17g,1\n", y1[i]);
    len += (size_t) snprintf (csv + len, sizeof csv - len, "%.17g,0\n", y0[i]);
  }
  for (size_t i = 0; i < 7; i++)
    m1 += y1[i] / 7.0L;
  for (size_t i = 0; i < 11; i++)
    m0 += y0[i] / 11.0L;
  for (size_t i = 0; i < 7; i++)
    ss1 += (y1[i] - m1) * (y1[i] - m1);
  for (size_t i = 0; i < 11; i++)
    ss0 += (y0[i] - m0) * (y0[i] - m0);
  want2 = sqrt ((double) (ss1 / 6.0L / 7.0L + ss0 / 10.0L / 11.0L));
  want0 = sqrt ((double) (ss1 / 49.0L + ss0 / 121.0L));
  for (int K = 1; K <= 3; K += 2) {
    test_job j = { 0 };
    bl_fit_opts fo;
    size_t id;
    double se, want = K == 3 ? want2 : want0;
    j.t = test_table_mem (csv, len, "groups.csv", NULL, 0);
    test_job_design_spec (&j, "y", "d", NULL);
    bl_fit_opts_init (&fo);
    fo.method = BL_METHOD_OLS;
    fo.se = (bl_se_kind) K;
    test_job_fit (&j, &fo, kind_name[K]);
    id = test_design_col (j.d, "d");
    se = bl_fit_se (j.f)[id];
    fprintf (stderr, "vcov two groups %s: se %.17g, closed form %.17g (rel %.2e)\n",
             kind_name[K], se, want, test_rel (se, want));
    ck_assert_msg (test_rel (bl_fit_beta (j.f)[id], (double) (m1 - m0)) <= 1e-12,
                   "two groups %s: beta %.17g", kind_name[K], bl_fit_beta (j.f)[id]);
    ck_assert_msg (test_rel (se, want) <= 1e-10, "two groups %s: se %.17g, closed form %.17g",
                   kind_name[K], se, want);
    test_job_free (&j);
  }
}
END_TEST

/* Intercept only: h_i = 1/n, so HC0 se = sqrt(SS)/n, HC1 = HC0 sqrt(n/(n-1)), HC2 =
   sqrt(SS/(n(n-1))) (= the model se s/sqrt(n)), HC3 = sqrt(SS/(n-1)^2) (closed forms from the
   definitions, common practice, no source); to 1e-10 relative. */
START_TEST (vcov_intercept_only)
{
  static const char csv[] = "y\n2.385\n3.71\n2.94\n4.417\n1.886\n5.02\n3.3\n";
  const double n = 7.0;
  const double yv[7] = { 2.385, 3.71, 2.94, 4.417, 1.886, 5.02, 3.3 };
  long double m = 0, ss = 0;
  double want[5];
  for (size_t i = 0; i < 7; i++)
    m += yv[i] / 7.0L;
  for (size_t i = 0; i < 7; i++)
    ss += (yv[i] - m) * (yv[i] - m);
  want[0] = sqrt ((double) ss / (n * (n - 1.0)));
  want[1] = sqrt ((double) ss) / n;
  want[2] = want[1] * sqrt (n / (n - 1.0));
  want[3] = want[0];
  want[4] = sqrt ((double) ss) / (n - 1.0);
  for (int K = 0; K <= 4; K++) {
    test_job j = { 0 };
    bl_fit_opts fo;
    j.t = test_table_mem (csv, strlen (csv), "one.csv", NULL, 0);
    test_job_design_spec (&j, "y", NULL, NULL);
    bl_fit_opts_init (&fo);
    fo.method = BL_METHOD_OLS;
    fo.se = (bl_se_kind) K;
    test_job_fit (&j, &fo, kind_name[K]);
    ck_assert_msg (test_rel (bl_fit_se (j.f)[0], want[K]) <= 1e-10, "intercept only %s: se %.17g, "
                   "closed form %.17g", kind_name[K], bl_fit_se (j.f)[0], want[K]);
    ck_assert_str_eq (bl_fit_stats_get (j.f)->se_kind, kind_name[K]);
    test_job_free (&j);
  }
}
END_TEST

/* ---------------------------------------------------------------- errors */

/* A row that has its own indicator column fits itself exactly: leverage 1, so hc2 and hc3
   (divisions by 1 - h) do not exist (vcov.c): BL_EDATA, where = FILE:LINE of that row, the
   message names the kind; hc0 and hc1 still work. */
START_TEST (vcov_error_leverage_one)
{
  static const char csv[] = "y,x,d\n3.1,1.2,0\n4.4,2.3,0\n5.2,2.9,0\n5.9,3.1,1\n6.2,3.8,0\n"
                            "7.3,4.6,0\n";
  for (int K = 1; K <= 4; K++) {
    test_job j = { 0 };
    bl_fit_opts fo;
    bl_err err = { 0 };
    bl_fit *f;
    j.t = test_table_mem (csv, strlen (csv), "lev.csv", NULL, 0);
    test_job_design_spec (&j, "y", "x, d", NULL);
    bl_fit_opts_init (&fo);
    fo.method = BL_METHOD_OLS;
    fo.se = (bl_se_kind) K;
    f = bl_fit_new (j.d, &fo, &err);
    if (K >= 3) {
      test_expect_fail (f, &err, BL_EDATA, "lev.csv:5", "leverage 1", kind_name[K], kind_name[K]);
      ck_assert_str_eq (err.where, "lev.csv:5");
    } else {
      ck_assert_msg (f != NULL, "leverage 1 %s: %s", kind_name[K], err.msg);
      for (size_t k = 0; k < 3; k++)
        ck_assert_msg (isfinite (bl_fit_se (f)[k]), "leverage 1 %s: se%zu %g", kind_name[K], k,
                       bl_fit_se (f)[k]);
      bl_fit_free (f);
    }
    test_job_free (&j);
  }
}
END_TEST

/* ---------------------------------------------------------------- basics */

START_TEST (vcov_kind_names)
{
  for (int K = 0; K <= 4; K++)
    ck_assert_str_eq (bl_se_kind_name ((bl_se_kind) K), kind_name[K]);
  ck_assert_str_eq (bl_se_kind_name ((bl_se_kind) 9), "model");
}
END_TEST

static Suite *
vcov_suite (void)
{
  Suite *s = suite_create ("vcov");
  TCase *ref = tcase_create ("reference");
  TCase *idt = tcase_create ("identities");
  TCase *err = tcase_create ("errors");
  TCase *bas = tcase_create ("basics");
  tcase_add_test (ref, vcov_ols_direct);
  tcase_add_test (ref, vcov_poisson_direct);
  tcase_add_test (idt, vcov_hc2_two_groups);
  tcase_add_test (idt, vcov_intercept_only);
  tcase_add_test (err, vcov_error_leverage_one);
  tcase_add_test (bas, vcov_kind_names);
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
  return test_run_suite (vcov_suite (), 1);
}
