/* check_diag.c -- residuals and the variance checks (diag.h), end to end.

   Every fit goes through the public pipeline (bl_table_read_mem -> bl_terms_parse ->
   bl_design_new -> bl_fit_new), on data simulated in the test with GSL generators and fixed
   seeds.  The checks, each with its source beside it:
   - reference: the Breusch-Pagan, Koenker and White statistics recomputed by direct least
     squares with GSL (gsl_multifit_linear) and gsl_cdf_chisq_Q; quantile residuals against
     closed forms with GSL's CDFs and, for the inverse gaussian, a GSL quadrature of the
     density; the Kolmogorov-Smirnov p-value against a direct computation and a known value;
   - identities: leverage sums to the rank, Cook's distance equals its deletion definition,
     squared deviance residuals sum to the deviance, spread-group boundaries and ties;
   - errors: each error path of bl_diag_new provoked;
   - basics: false-flag rates of the spread ratio and the lack-of-fit check, the variance
     power on simulated families. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_multifit.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_sf_gamma.h>
#include <gsl/gsl_sort.h>
#include <gsl/gsl_statistics_double.h>
#include "alloc.h"
#include "design.h"
#include "diag.h"
#include "order.h"
#include "fit.h"
#include "report.h"
#include "table.h"
#include "terms.h"
#include "testutil.h"

/* ---------------------------------------------------------------- helpers */

/* Fit J's design with method M, family FAM and link LNK; require convergence. */
static const bl_fit *
job_fit (test_job *j, bl_method m, const bl_family *fam, const bl_link *lnk)
{
  bl_fit_opts fo;
  bl_fit_opts_init (&fo);
  fo.method = m;
  return test_job_fit_glm (j, fam, lnk, &fo);
}

/* Least squares of T on the columns of Z by GSL's SVD solver: RSS, TSS about the mean and the
   numerical rank (singular values above 1e-10 of the largest). */
static void
gsl_aux (const gsl_matrix *Z, const gsl_vector *t, double *rss, double *tss, size_t *rank)
{
  gsl_multifit_linear_workspace *w = gsl_multifit_linear_alloc (Z->size1, Z->size2);
  gsl_vector *c = gsl_vector_alloc (Z->size2);
  gsl_matrix *cov = gsl_matrix_alloc (Z->size2, Z->size2);
  double mean = 0.0, ss = 0.0;
  ck_assert_int_eq (gsl_multifit_linear (Z, t, c, cov, rss, w), GSL_SUCCESS);
  *rank = gsl_multifit_linear_rank (1e-10, w);
  for (size_t i = 0; i < t->size; i++)
    mean += gsl_vector_get (t, i);
  mean /= (double) t->size;
  for (size_t i = 0; i < t->size; i++)
    ss += (gsl_vector_get (t, i) - mean) * (gsl_vector_get (t, i) - mean);
  *tss = ss;
  gsl_vector_free (c);
  gsl_matrix_free (cov);
  gsl_multifit_linear_free (w);
}

/* ---------------------------------------------------------------- reference */

/* Breusch & Pagan 1979 (Econometrica 47, 1287-1294), Koenker 1981 (J. Econometrics 17,
   107-112) and White 1980 (Econometrica 48, 817-838) recomputed in the test: the auxiliary
   regressions of e^2 / (RSS / n) and e^2 formed here and solved with gsl_multifit_linear
   (GSL reference manual, "Least-Squares Fitting"); BP = ESS / 2, Koenker and White = n R^2;
   dof = rank less the intercept, p from gsl_cdf_chisq_Q.  The categorical term makes the
   squares of its 0/1 indicators equal to the indicators and their product zero: aliased. */
START_TEST (diag_variance_tests_gsl)
{
  enum { N = 300, Q0 = 5 };
  static const char *const cat[] = { "site" };
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  double x1[N], x2[N], y[N];
  int site[N];
  test_buf csv = { 0 };
  test_job j = { 0 };
  bl_diag_opts dopt;
  bl_diag *dg;
  bl_err err = { 0 };
  const bl_diag_result *res;
  gsl_matrix *X = gsl_matrix_alloc (N, Q0), *cov = gsl_matrix_alloc (Q0, Q0);
  gsl_matrix *Zw = gsl_matrix_alloc (N, Q0 + 10), *Zr = gsl_matrix_alloc (N, Q0 + 7);
  gsl_vector *yv = gsl_vector_alloc (N), *b = gsl_vector_alloc (Q0), *t = gsl_vector_alloc (N);
  gsl_multifit_linear_workspace *w = gsl_multifit_linear_alloc (N, Q0);
  double e[N], rss0, rss, tss, ess, stat;
  size_t rank;
  gsl_rng_set (r, 4711);
  test_buf_printf (&csv, "y,x1,x2,site\n");
  for (size_t i = 0; i < N; i++) {
    x1[i] = 3.0 * gsl_rng_uniform (r);
    x2[i] = gsl_ran_gaussian (r, 1.3);
    site[i] = (int) gsl_rng_uniform_int (r, 3);
    y[i] = 2.385 + 1.47 * x1[i] - 0.713 * x2[i] + 0.9 * (site[i] == 1) - 0.4 * (site[i] == 2)
           + gsl_ran_gaussian (r, 0.5 + 0.8 * x1[i]);
    test_buf_printf (&csv, "%.17g,%.17g,%.17g,%c\n", y[i], x1[i], x2[i], "ABC"[site[i]]);
  }
  test_job_csv (&j, &csv, cat, 1, "y", "x1, x2, site", NULL, NULL);
  ck_assert_str_eq (bl_design_label (j.d, 3), "site=B");
  ck_assert_str_eq (bl_design_label (j.d, 4), "site=C");
  job_fit (&j, BL_METHOD_OLS, &bl_family_gaussian, &bl_link_identity);
  bl_diag_opts_init (&dopt);
  dg = bl_diag_new (j.f, &dopt, &err);
  ck_assert_msg (dg != NULL, "diag: %s: %s", err.where, err.msg);
  res = bl_diag_get (dg);

  /* the OLS residuals by GSL */
  for (size_t i = 0; i < N; i++) {
    const double row[Q0] = { 1.0, x1[i], x2[i], site[i] == 1, site[i] == 2 };
    for (size_t k = 0; k < Q0; k++)
      gsl_matrix_set (X, i, k, row[k]);
    gsl_vector_set (yv, i, y[i]);
  }
  ck_assert_int_eq (gsl_multifit_linear (X, yv, b, cov, &rss0, w), GSL_SUCCESS);
  for (size_t i = 0; i < N; i++) {
    double fit = 0.0;
    for (size_t k = 0; k < Q0; k++)
      fit += gsl_matrix_get (X, i, k) * gsl_vector_get (b, k);
    e[i] = y[i] - fit;
    ck_assert_msg (fabs (e[i] - (bl_fit_y (j.f)[i] - bl_fit_mu (j.f)[i])) <= 1e-10,
                   "variance tests: residual %zu", i);
  }
  /* Breusch-Pagan */
  for (size_t i = 0; i < N; i++)
    gsl_vector_set (t, i, e[i] * e[i] / (rss0 / N));
  gsl_aux (X, t, &rss, &tss, &rank);
  ess = tss - rss;
  stat = 0.5 * ess;
  ck_assert_msg (res->breusch_pagan.done, "breusch-pagan: not done");
  ck_assert_msg (test_rel_safe (res->breusch_pagan.stat, stat) <= 1e-9,
                 "breusch-pagan: stat %.17g vs %.17g", res->breusch_pagan.stat, stat);
  ck_assert_uint_eq (res->breusch_pagan.dof, rank - 1);
  ck_assert_uint_eq (res->breusch_pagan.dof, 4);
  ck_assert_msg (test_rel_safe (res->breusch_pagan.p, gsl_cdf_chisq_Q (stat, 4.0)) <= 1e-9,
                 "breusch-pagan: p %.17g", res->breusch_pagan.p);
  /* Koenker */
  for (size_t i = 0; i < N; i++)
    gsl_vector_set (t, i, e[i] * e[i]);
  gsl_aux (X, t, &rss, &tss, &rank);
  stat = N * (1.0 - rss / tss);
  ck_assert_msg (test_rel_safe (res->koenker.stat, stat) <= 1e-9, "koenker: stat %.17g vs %.17g",
                 res->koenker.stat, stat);
  ck_assert_uint_eq (res->koenker.dof, 4);
  ck_assert_msg (test_rel_safe (res->koenker.p, gsl_cdf_chisq_Q (stat, 4.0)) <= 1e-9,
                 "koenker: p");
  /* White: all 10 squares and cross products of the 4 columns (rank 12 of 15), and the 7
     that are not aliased, which must give the same statistic */
  for (size_t i = 0; i < N; i++) {
    const double v[4] = { x1[i], x2[i], site[i] == 1, site[i] == 2 };
    size_t col = Q0, cr = Q0;
    for (size_t k = 0; k < Q0; k++) {
      gsl_matrix_set (Zw, i, k, gsl_matrix_get (X, i, k));
      gsl_matrix_set (Zr, i, k, gsl_matrix_get (X, i, k));
    }
    for (size_t a = 0; a < 4; a++)
      for (size_t c = a; c < 4; c++) {
        gsl_matrix_set (Zw, i, col++, v[a] * v[c]);
        if (!(a >= 2 && c >= 2))            /* sB^2 = sB, sC^2 = sC, sB sC = 0 */
          gsl_matrix_set (Zr, i, cr++, v[a] * v[c]);
      }
  }
  gsl_aux (Zw, t, &rss, &tss, &rank);
  ck_assert_uint_eq (rank, 12);
  gsl_aux (Zr, t, &rss, &tss, &rank);
  ck_assert_uint_eq (rank, 12);
  stat = N * (1.0 - rss / tss);
  ck_assert_msg (res->white.done, "white: not done: %s", res->white.why);
  ck_assert_msg (test_rel_safe (res->white.stat, stat) <= 1e-9, "white: stat %.17g vs %.17g",
                 res->white.stat, stat);
  ck_assert_uint_eq (res->white.dof, 11);
  ck_assert_msg (test_rel_safe (res->white.p, gsl_cdf_chisq_Q (stat, 11.0)) <= 1e-9, "white: p");
  bl_diag_free (dg);
  test_job_free (&j);
  free (csv.s);
  gsl_multifit_linear_free (w);
  gsl_matrix_free (X);
  gsl_matrix_free (cov);
  gsl_matrix_free (Zw);
  gsl_matrix_free (Zr);
  gsl_vector_free (yv);
  gsl_vector_free (b);
  gsl_vector_free (t);
  gsl_rng_free (r);
}
END_TEST

/* White's test is skipped, with its reason, above BL_DIAG_WHITE_MAX_P (20) non-intercept
   columns (diag.h); Breusch-Pagan still runs on all 21. */
START_TEST (diag_white_skipped)
{
  enum { N = 300, P = 21 };
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  test_buf csv = { 0 }, terms = { 0 };
  test_job j = { 0 };
  bl_diag_opts dopt;
  bl_diag *dg;
  bl_err err = { 0 };
  gsl_rng_set (r, 99);
  test_buf_printf (&csv, "y");
  for (size_t k = 0; k < P; k++) {
    test_buf_printf (&csv, ",x%zu", k);
    test_buf_printf (&terms, "%sx%zu", k ? ", " : "", k);
  }
  test_buf_printf (&csv, "\n");
  for (size_t i = 0; i < N; i++) {
    double yv = 1.0 + gsl_ran_gaussian (r, 1.0);
    test_buf_printf (&csv, "%.17g", yv);
    for (size_t k = 0; k < P; k++)
      test_buf_printf (&csv, ",%.17g", gsl_rng_uniform (r));
    test_buf_printf (&csv, "\n");
  }
  test_job_csv (&j, &csv, NULL, 0, "y", terms.s, NULL, NULL);
  job_fit (&j, BL_METHOD_OLS, &bl_family_gaussian, &bl_link_identity);
  bl_diag_opts_init (&dopt);
  dg = bl_diag_new (j.f, &dopt, &err);
  ck_assert_msg (dg != NULL, "white skipped: %s", err.msg);
  ck_assert_msg (!bl_diag_get (dg)->white.done, "white skipped: done with 21 columns");
  ck_assert_msg (strstr (bl_diag_get (dg)->white.why, "more than") != NULL
                 && strstr (bl_diag_get (dg)->white.why, "20") != NULL,
                 "white skipped: reason '%s'", bl_diag_get (dg)->white.why);
  ck_assert_msg (bl_diag_get (dg)->breusch_pagan.done, "white skipped: bp not done");
  ck_assert_uint_eq (bl_diag_get (dg)->breusch_pagan.dof, 21);
  bl_diag_free (dg);
  /* at the limit itself White runs */
  dopt.white_max_p = 21;
  dg = bl_diag_new (j.f, &dopt, &err);
  ck_assert_msg (dg && bl_diag_get (dg)->white.done, "white at the limit: not done");
  ck_assert_uint_eq (bl_diag_get (dg)->white.dof, 21 + 21 * 22 / 2);
  bl_diag_free (dg);
  test_job_free (&j);
  free (csv.s);
  free (terms.s);
  gsl_rng_free (r);
}
END_TEST

/* Data "y,x,w" from family K (0 gaussian, 1 gamma, 2 inverse gaussian, 3 poisson) with
   log mu = 0.8 + 1.1 x, x uniform(0,1), prior weights w in {1, 2.5} (not for poisson). */
static void
sim_family (test_buf *csv, int K, size_t n, unsigned long seed)
{
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  gsl_rng_set (r, seed);
  test_buf_printf (csv, "y,x,w\n");
  for (size_t i = 0; i < n; i++) {
    const double x = gsl_rng_uniform (r), mu = exp (0.8 + 1.1 * x);
    const double a = K == 3 ? 1.0 : (i % 3 == 0 ? 2.5 : 1.0);
    double y = 0.0;
    switch (K) {
    case 0: y = mu + gsl_ran_gaussian (r, 0.7 / sqrt (a)); break;
    case 1: y = gsl_ran_gamma (r, 3.0 * a, mu / (3.0 * a)); break;
    case 2: {                         /* Michael, Schucany & Haas 1976, as check_irls.c */
      const double lam = 4.0 * a, nu = gsl_ran_gaussian (r, 1.0), v = nu * nu;
      const double xx = mu + mu * mu * v / (2.0 * lam)
                        - mu / (2.0 * lam) * sqrt (4.0 * mu * lam * v + mu * mu * v * v);
      y = gsl_rng_uniform (r) <= mu / (mu + xx) ? xx : mu * mu / xx;
      break;
    }
    default: y = (double) gsl_ran_poisson (r, mu); break;
    }
    test_buf_printf (csv, "%.17g,%.17g,%.17g\n", y, x, a);
  }
  gsl_rng_free (r);
}

typedef struct ig_par { double mu, lam; } ig_par;

/* Inverse gaussian density (Chhikara & Folks 1989, eq. 2.1, from memory):
   f(y) = sqrt(lam / (2 pi y^3)) exp(-lam (y - mu)^2 / (2 mu^2 y)). */
static double
ig_pdf (double y, void *vp)
{
  const ig_par *p = vp;
  if (!(y > 0.0))
    return 0.0;
  return sqrt (p->lam / (2.0 * M_PI * y * y * y))
         * exp (-p->lam * (y - p->mu) * (y - p->mu) / (2.0 * p->mu * p->mu * y));
}

/* Quantile residuals of the continuous families (Dunn & Smyth 1996, J. Comput. Graph. Statist.
   5, 236-244) against their closed forms at the Pearson dispersion phi (row phi / a):
   gaussian (y - mu) / sqrt(phi / a); gamma Phi^-1(F(y; shape a/phi, scale mu phi / a)) with
   gsl_cdf_gamma_P; inverse gaussian Phi^-1 of the density integrated by GSL's QAGS. */
START_TEST (diag_quantile_continuous)
{
  static const bl_family *const fam[3] = { &bl_family_gaussian, &bl_family_gamma,
                                            &bl_family_invgauss };
  gsl_integration_workspace *iw = gsl_integration_workspace_alloc (1000);
  for (int K = 0; K < 3; K++) {
    enum { N = 300 };
    test_buf csv = { 0 };
    test_job j = { 0 };
    bl_err err = { 0 };
    double q[N], worst = 0.0;
    double phi;
    const double *y, *mu, *a;
    sim_family (&csv, K, N, 1000u + (unsigned) K);
    test_job_csv (&j, &csv, NULL, 0, "y", "x", "w", NULL);
    job_fit (&j, BL_METHOD_GLM, fam[K], &bl_link_log);
    phi = bl_fit_stats_get (j.f)->phi_pearson;
    y = bl_fit_y (j.f);
    mu = bl_fit_mu (j.f);
    a = bl_fit_prior_w (j.f);
    ck_assert_ptr_nonnull (a);
    ck_assert_int_eq (bl_quantile_residuals (j.f, NULL, q, &err), BL_OK);
    for (size_t i = 0; i < N; i++) {
      double want, d;
      if (K == 0) {
        want = (y[i] - mu[i]) / sqrt (phi / a[i]);
        d = fabs (q[i] - want);
      } else if (K == 1) {
        want = gsl_cdf_ugaussian_Pinv (gsl_cdf_gamma_P (y[i], a[i] / phi, mu[i] * phi / a[i]));
        d = fabs (q[i] - want);
      } else {
        ig_par par = { mu[i], a[i] / phi };
        gsl_function fn = { ig_pdf, &par };
        double F, abserr;
        ck_assert_int_eq (gsl_integration_qags (&fn, 0.0, y[i], 1e-14, 1e-12, 1000, iw, &F,
                                                &abserr), GSL_SUCCESS);
        /* compared as probabilities: Phi^-1 magnifies the quadrature error in the tails */
        d = fabs (gsl_cdf_ugaussian_P (q[i]) - F);
      }
      worst = d > worst ? d : worst;
    }
    fprintf (stderr, "quantile residuals %s: largest difference %.3g\n",
             bl_family_name (fam[K]), worst);
    ck_assert_msg (worst <= (K == 2 ? 1e-10 : 1e-9), "quantile %s: worst difference %.3g",
                   bl_family_name (fam[K]), worst);
    test_job_free (&j);
    free (csv.s);
  }
  gsl_integration_workspace_free (iw);
}
END_TEST

/* Quantile residuals far in the tails (Dunn & Smyth 1996): for the gaussian the residual is
   (y - mu) / sqrt(phi / a) exactly, also for a row 9.4 and one 43 sd above its mean (where
   u = F(y) rounds to 1 and the old clamp gave 8.2); for the poisson a row 13 sd above its
   mean has its residual between Q^-1(P(Y > y - 1)) and Q^-1(P(Y > y)), the upper tails from
   GSL's lower incomplete gamma P(y + 1, mu) (Abramowitz & Stegun 26.4.21), which do not
   underflow there. */
START_TEST (diag_quantile_far_tail)
{
  enum { N = 4000 };
  test_buf csv = { 0 };
  test_job j = { 0 };
  bl_err err = { 0 };
  double *q = malloc (N * sizeof *q), worst = 0.0, zmax = 0.0;
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  gsl_rng_set (r, 4242);
  test_buf_printf (&csv, "y,x\n");
  for (size_t i = 0; i < N; i++) {
    const double x = gsl_rng_uniform (r);
    const double d = i == 7 ? 13.0 : i == 11 ? 60.0 : gsl_ran_gaussian (r, 1.0);
    test_buf_printf (&csv, "%.17g,%.17g\n", 5.0 + 2.0 * x + d, x);
  }
  test_job_csv (&j, &csv, NULL, 0, "y", "x", NULL, NULL);
  job_fit (&j, BL_METHOD_GLM, &bl_family_gaussian, &bl_link_identity);
  ck_assert_int_eq (bl_quantile_residuals (j.f, NULL, q, &err), BL_OK);
  {
    const double *y = bl_fit_y (j.f), *mu = bl_fit_mu (j.f);
    const double s = sqrt (bl_fit_stats_get (j.f)->phi_pearson);
    for (size_t i = 0; i < N; i++) {
      const double want = (y[i] - mu[i]) / s;
      const double d = fabs (q[i] - want) / (1.0 + fabs (want));
      worst = d > worst ? d : worst;
      zmax = fabs (want) > zmax ? fabs (want) : zmax;
    }
    fprintf (stderr, "far-tail quantile residuals, gaussian: largest |z| %.2f (row 12: "
             "%.15g), largest relative difference %.3g\n", zmax, q[11], worst);
    ck_assert_msg (zmax > 40.0 && (y[7] - mu[7]) / s > 9.0, "far tail: zmax %g", zmax);
    ck_assert_msg (worst <= 1e-12, "far tail gaussian: worst %.3g", worst);
  }
  test_job_free (&j);
  free (csv.s);
  csv.s = NULL;
  csv.len = csv.cap = 0;
  /* poisson, mean about 20, one row at y = 80 */
  test_buf_printf (&csv, "y,x\n");
  for (size_t i = 0; i < 400; i++) {
    const double x = gsl_rng_uniform (r);
    const unsigned k = i == 3 ? 80u : gsl_ran_poisson (r, exp (2.8 + 0.4 * x));
    test_buf_printf (&csv, "%u,%.17g\n", k, x);
  }
  test_job_csv (&j, &csv, NULL, 0, "y", "x", NULL, NULL);
  job_fit (&j, BL_METHOD_GLM, &bl_family_poisson, &bl_link_log);
  ck_assert_int_eq (bl_quantile_residuals (j.f, r, q, &err), BL_OK);
  {
    const double y = bl_fit_y (j.f)[3], mu = bl_fit_mu (j.f)[3];
    const double lo = gsl_cdf_ugaussian_Qinv (gsl_sf_gamma_inc_P (y, mu));        /* S(y-1) */
    const double hi = gsl_cdf_ugaussian_Qinv (gsl_sf_gamma_inc_P (y + 1.0, mu));  /* S(y) */
    fprintf (stderr, "far-tail quantile residual, poisson y %g mu %.4g: %.12g in [%.12g, "
             "%.12g]\n", y, mu, q[3], lo, hi);
    ck_assert_msg ((y - mu) / sqrt (mu) > 12.0, "poisson far row: z %g", (y - mu) / sqrt (mu));
    ck_assert_msg (q[3] >= lo * (1.0 - 1e-12) && q[3] <= hi * (1.0 + 1e-12),
                   "poisson far row: %.17g not in [%.17g, %.17g]", q[3], lo, hi);
  }
  test_job_free (&j);
  free (csv.s);
  free (q);
  gsl_rng_free (r);
}
END_TEST

/* The Kolmogorov distribution, Q(lambda) = 2 sum_{k>=1} (-1)^(k-1) exp(-2 k^2 lambda^2)
   (Kolmogorov 1933; Stephens 1970, J. R. Statist. Soc. B 32, 115-122, from memory). */
static double
kolmogorov_q (double lam)
{
  double s = 0.0;
  for (int k = 1; k <= 200; k++)
    s += 2.0 * ((k % 2) ? 1.0 : -1.0) * exp (-2.0 * k * k * lam * lam);
  return s;
}

/* Direct D = sup |F_n - Phi| with gsl_cdf_ugaussian_P, over sorted X. */
static double
ks_direct (const double *x, size_t n)
{
  double dmax = 0.0;
  for (size_t i = 0; i < n; i++) {
    const double F = gsl_cdf_ugaussian_P (x[i]);
    dmax = GSL_MAX (dmax, GSL_MAX ((double) (i + 1) / n - F, F - (double) i / n));
  }
  return dmax;
}

/* bl_ks_normal: D against the direct computation, p against the Kolmogorov series at
   Stephens' lambda, and the known value: the asymptotic p at lambda = 1.36 is about 0.049
   (from memory: the 95% point of the Kolmogorov distribution is 1.358). */
START_TEST (diag_ks_normal)
{
  enum { N = 10000 };
  double *x = malloc (N * sizeof *x), *xs = malloc (N * sizeof *xs), d, p, lam;
  const double en = sqrt ((double) N), f = en + 0.12 + 0.11 / en;
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  ck_assert_msg (fabs (kolmogorov_q (1.36) - 0.049) <= 0.001, "ks: Q(1.36) = %.5f",
                 kolmogorov_q (1.36));
  ck_assert_msg (fabs (kolmogorov_q (1.358) - 0.05) <= 0.0005, "ks: Q(1.358) = %.5f",
                 kolmogorov_q (1.358));
  /* a sample with D near 1.36 / f: F(x_i) = u_i + delta sin(pi u_i), u_i = (i + 1/2) / N,
     whose largest deviation, 1/(2N) + delta, sits at u = 1/2 */
  for (size_t i = 0; i < N; i++) {
    const double u = (i + 0.5) / N, delta = 1.36 / f - 0.5 / N;
    x[i] = gsl_cdf_ugaussian_Pinv (u + delta * sin (M_PI * u));
  }
  memcpy (xs, x, N * sizeof *x);
  bl_ks_normal (x, N, &d, &p);
  lam = f * d;
  ck_assert_msg (test_rel_safe (d, ks_direct (xs, N)) <= 1e-12, "ks: D %.17g vs %.17g", d,
                 ks_direct (xs, N));
  ck_assert_msg (fabs (lam - 1.36) <= 1e-6, "ks: lambda %.9f", lam);
  ck_assert_msg (fabs (p - kolmogorov_q (lam)) <= 1e-12, "ks: p %.17g vs %.17g", p,
                 kolmogorov_q (lam));
  ck_assert_msg (fabs (p - 0.049) <= 0.001, "ks: p at lambda 1.36 = %.5f", p);
  /* a shuffled normal sample: D as the direct one after sorting */
  gsl_rng_set (r, 12345);
  for (size_t i = 0; i < 500; i++)
    x[i] = xs[i] = gsl_ran_gaussian (r, 1.0) + 0.05;
  gsl_sort (xs, 1, 500);
  bl_ks_normal (x, 500, &d, &p);
  lam = (sqrt (500.0) + 0.12 + 0.11 / sqrt (500.0)) * d;
  ck_assert_msg (d == ks_direct (xs, 500), "ks: n=500 D %.17g vs %.17g", d,
                 ks_direct (xs, 500));
  ck_assert_msg (fabs (p - GSL_MIN (1.0, kolmogorov_q (lam))) <= 1e-12 || lam < 0.2,
                 "ks: n=500 p");
  bl_ks_normal (x, 0, &d, &p);
  ck_assert_msg (isnan (d) && isnan (p), "ks: n=0 not NaN");
  free (x);
  free (xs);
  gsl_rng_free (r);
}
END_TEST

/* Poisson quantile residuals, randomized on (F(y-1), F(y)) (Dunn & Smyth 1996), are standard
   normal under the model: KS with GSL's normal CDF on n = 20000 seeded draws, p > 0.01. */
START_TEST (diag_quantile_poisson)
{
  enum { N = 20000 };
  test_buf csv = { 0 };
  test_job j = { 0 };
  bl_err err = { 0 };
  double *q = malloc (N * sizeof *q), d, p, lam;
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  sim_family (&csv, 3, N, 777);
  test_job_csv (&j, &csv, NULL, 0, "y", "x", NULL, NULL);
  job_fit (&j, BL_METHOD_GLM, &bl_family_poisson, &bl_link_log);
  gsl_rng_set (r, 2024);
  ck_assert_int_eq (bl_quantile_residuals (j.f, r, q, &err), BL_OK);
  gsl_sort (q, 1, N);
  d = ks_direct (q, N);
  lam = (sqrt ((double) N) + 0.12 + 0.11 / sqrt ((double) N)) * d;
  p = GSL_MIN (1.0, kolmogorov_q (lam));
  fprintf (stderr, "poisson quantile residuals: KS D %.4g, p %.3g (n %d)\n", d, p, N);
  ck_assert_msg (p > 0.01, "poisson quantile: KS p %.4g", p);
  /* and the unrandomized mid-point would not pass: the randomization matters */
  {
    const double *y = bl_fit_y (j.f), *mu = bl_fit_mu (j.f);
    for (size_t i = 0; i < N; i++) {
      const double hi = gsl_cdf_poisson_P ((unsigned) y[i], mu[i]);
      const double lo = y[i] >= 1.0 ? gsl_cdf_poisson_P ((unsigned) (y[i] - 1.0), mu[i]) : 0.0;
      q[i] = gsl_cdf_ugaussian_Pinv (hi);
      (void) lo;
    }
    gsl_sort (q, 1, N);
    d = ks_direct (q, N);
    lam = (sqrt ((double) N) + 0.12 + 0.11 / sqrt ((double) N)) * d;
    ck_assert_msg (kolmogorov_q (lam) < 1e-6, "poisson quantile: Phi^-1(F(y)) passes KS");
  }
  test_job_free (&j);
  free (csv.s);
  free (q);
  gsl_rng_free (r);
}
END_TEST

/* ---------------------------------------------------------------- identities */

/* Stable order by (key, row index), computed here by insertion sort. */
static void
order_direct (const double *key, size_t n, size_t *ord)
{
  for (size_t i = 0; i < n; i++) {
    size_t k = i;
    while (k > 0 && key[ord[k - 1]] > key[i]) {
      ord[k] = ord[k - 1];
      k--;
    }
    ord[k] = i;
  }
}

/* The spread groups (diag.h): sorted rows floor(g n / G) .. floor((g + 1) n / G) - 1, ties of
   the fitted value broken by row index (fitted values here come in runs of 7 equal values, in
   an order that is not the row order); G reduced while a group would hold fewer than 20 rows;
   below 40 rows no ratio, with a reason. */
START_TEST (diag_spread_groups_ties)
{
  static const size_t sizes[] = { 39, 40, 59, 60, 99, 100, 103, 1001 };
  static const size_t wantG[] = { 0, 2, 2, 3, 4, 5, 5, 5 };
  for (size_t s = 0; s < sizeof sizes / sizeof sizes[0]; s++) {
    const size_t n = sizes[s];
    double *fv = malloc (n * sizeof *fv), *r = malloc (n * sizeof *r);
    size_t *ord = malloc (n * sizeof *ord), *o2 = malloc (n * sizeof *o2);
    bl_spread sp;
    bl_err err = { 0 };
    double lo = HUGE_VAL, hi = 0.0;
    for (size_t i = 0; i < n; i++) {
      fv[i] = (double) ((i * 37 % n) / 7);      /* ties in runs of 7, rows shuffled */
      r[i] = sin (1.0 + 2.385 * (double) i);     /* distinct residuals: ties matter */
    }
    ck_assert_int_eq (bl_order_by (fv, n, o2, &err), BL_OK);
    order_direct (fv, n, ord);
    for (size_t i = 0; i < n; i++)
      ck_assert_msg (o2[i] == ord[i], "spread n=%zu: order[%zu] %zu vs %zu", n, i, o2[i],
                     ord[i]);
    ck_assert_int_eq (bl_spread_compute (fv, r, n, NULL, 0, &sp, &err), BL_OK);
    ck_assert_msg (sp.ngroups == wantG[s], "spread n=%zu: %zu groups, expected %zu", n,
                   sp.ngroups, wantG[s]);
    if (wantG[s] == 0) {
      ck_assert_msg (isnan (sp.ratio) && isnan (sp.null95) && !sp.flag,
                     "spread n=%zu: ratio not NaN", n);
      ck_assert_msg (strstr (sp.why, "fewer than 40 rows") != NULL, "spread n=%zu: why '%s'",
                     n, sp.why);
    }
    for (size_t g = 0; g < sp.ngroups; g++) {
      const size_t G = sp.ngroups, a = g * n / G, b = (g + 1) * n / G;
      double ss = 0.0, sf = 0.0;
      for (size_t k = a; k < b; k++) {
        ss += r[ord[k]] * r[ord[k]];
        sf += fv[ord[k]];
      }
      ck_assert_msg (sp.groups[g].n == b - a, "spread n=%zu g=%zu: size", n, g);
      ck_assert_msg (sp.groups[g].n >= 20, "spread n=%zu g=%zu: fewer than 20", n, g);
      ck_assert_msg (test_rel_safe (sp.groups[g].rms, sqrt (ss / (double) (b - a))) <= 1e-13,
                     "spread n=%zu g=%zu: rms %.17g vs %.17g", n, g, sp.groups[g].rms,
                     sqrt (ss / (double) (b - a)));
      ck_assert_msg (test_rel_safe (sp.groups[g].fitted_mean, sf / (double) (b - a)) <= 1e-13,
                     "spread n=%zu g=%zu: fitted mean", n, g);
      lo = GSL_MIN (lo, sp.groups[g].rms);
      hi = GSL_MAX (hi, sp.groups[g].rms);
    }
    if (sp.ngroups)
      ck_assert_msg (test_rel_safe (sp.ratio, hi / lo) <= 1e-15, "spread n=%zu: ratio", n);
    bl_spread_clear (&sp);
    bl_spread_clear (&sp);                       /* twice is harmless */
    free (fv);
    free (r);
    free (ord);
    free (o2);
  }
}
END_TEST

/* null95 against a simulation written here: normal residuals of common variance, the ratio
   of the largest to the smallest group rms for the same group sizes, 40000 replicates with
   another generator stream (common practice, no source).  Monte Carlo error of two 95%
   points: a few per cent. */
START_TEST (diag_spread_null95_simulated)
{
  static const size_t sizes[] = { 100, 1000 };
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937), *r2 = gsl_rng_alloc (gsl_rng_taus2);
  for (size_t s = 0; s < 2; s++) {
    const size_t n = sizes[s], reps = 40000;
    double *fv = malloc (n * sizeof *fv), *e = malloc (n * sizeof *e);
    double *sim = malloc (reps * sizeof *sim), q;
    bl_spread sp;
    bl_err err = { 0 };
    for (size_t i = 0; i < n; i++) {
      fv[i] = (double) i;
      e[i] = 1.0;
    }
    gsl_rng_set (r, 31);
    ck_assert_int_eq (bl_spread_compute (fv, e, n, r, BL_DIAG_NULL_REPS, &sp, &err), BL_OK);
    gsl_rng_set (r2, 8);
    for (size_t k = 0; k < reps; k++) {
      double lo = HUGE_VAL, hi = 0.0;
      for (size_t g = 0; g < 5; g++) {
        const size_t a = g * n / 5, b = (g + 1) * n / 5;
        double ss = 0.0;
        for (size_t i = a; i < b; i++) {
          const double z = gsl_ran_gaussian_ziggurat (r2, 1.0);
          ss += z * z;
        }
        lo = GSL_MIN (lo, sqrt (ss / (double) (b - a)));
        hi = GSL_MAX (hi, sqrt (ss / (double) (b - a)));
      }
      sim[k] = hi / lo;
    }
    gsl_sort (sim, 1, reps);
    q = gsl_stats_quantile_from_sorted_data (sim, 1, reps, 0.95);
    fprintf (stderr, "spread null95 n=%zu: ballast %.4f, simulated here %.4f\n", n, sp.null95,
             q);
    ck_assert_msg (test_rel_safe (sp.null95, q) <= 0.03, "null95 n=%zu: %.4f vs %.4f", n,
                   sp.null95, q);
    ck_assert_msg (!sp.flag, "null95 n=%zu: constant residuals flagged", n);
    bl_spread_clear (&sp);
    free (fv);
    free (e);
    free (sim);
  }
  gsl_rng_free (r);
  gsl_rng_free (r2);
}
END_TEST

/* The flag rule (diag.h): ratio >= 2 and ratio > null95.  Residuals scaled so that the last
   group's rms is exactly c times the others': c = 2 flags (null95 is about 1.3 at these
   sizes), c just below 2 does not; and on random spreads the flag always equals the rule. */
START_TEST (diag_spread_flag_rule)
{
  enum { N = 1000 };
  double fv[N], e[N];
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  bl_err err = { 0 };
  bl_spread sp;
  static const double cs[] = { 2.0, 1.999, 2.5, 1.0 };
  static const int want[] = { 1, 0, 1, 0 };
  size_t nflag = 0;
  for (size_t c = 0; c < 4; c++) {
    for (size_t i = 0; i < N; i++) {
      fv[i] = (double) i;
      e[i] = ((i % 2) ? 1.0 : -1.0) * (i >= 800 ? cs[c] : 1.0);
    }
    gsl_rng_set (r, 5);
    ck_assert_int_eq (bl_spread_compute (fv, e, N, r, 1000, &sp, &err), BL_OK);
    ck_assert_msg (sp.null95 < 1.5, "flag rule: null95 %.3f", sp.null95);
    ck_assert_msg (test_rel_safe (sp.ratio, cs[c]) <= 1e-14, "flag rule c=%g: ratio %.17g", cs[c],
                   sp.ratio);
    ck_assert_msg (sp.flag == want[c], "flag rule c=%g: flag %d", cs[c], sp.flag);
    bl_spread_clear (&sp);
  }
  for (size_t rep = 0; rep < 300; rep++) {
    const size_t n = 40 + rep;
    for (size_t i = 0; i < n; i++) {
      fv[i] = gsl_rng_uniform (r);
      e[i] = gsl_ran_gaussian (r, 1.0 + 2.0 * fv[i] * (double) (rep % 3));
    }
    ck_assert_int_eq (bl_spread_compute (fv, e, n, r, 400, &sp, &err), BL_OK);
    ck_assert_msg (sp.flag == (sp.ratio >= 2.0 && sp.ratio > sp.null95),
                   "flag rule rep %zu: ratio %.4f null95 %.4f flag %d", rep, sp.ratio,
                   sp.null95, sp.flag);
    nflag += (size_t) sp.flag;
    bl_spread_clear (&sp);
  }
  ck_assert_msg (nflag > 0 && nflag < 300, "flag rule: %zu of 300 flagged", nflag);
  gsl_rng_free (r);
}
END_TEST

/* The residual table (diag.h).  Identities: the leverages are the diagonal of the hat matrix
   W^1/2 X (X'WX)^-1 X' W^1/2, whose trace is the rank (here computed independently from a QR
   of sqrt(w) X by GSL, with a categorical term and prior weights); squared deviance residuals
   sum to the deviance D = sum a_i d_i; for OLS Cook's distance equals its deletion
   definition sum_j (yhat_j - yhat_j(i))^2 / (k s^2) (Cook 1977, Technometrics 19, 15-18),
   refitted here with row i left out by gsl_multifit_linear. */
START_TEST (diag_resid_table_identities)
{
  enum { N = 240 };
  static const char *const cat[] = { "g" };
  static const bl_family *const fam[3] = { &bl_family_gamma, &bl_family_poisson,
                                            &bl_family_gaussian };
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  for (int K = 0; K < 3; K++) {
    test_buf csv = { 0 };
    test_job j = { 0 };
    bl_err err = { 0 };
    bl_resid_table *t;
    double x[N], lev = 0.0, dev = 0.0;
    int g[N];
    const bl_fit_stats *st;
    gsl_rng_set (r, 60u + (unsigned) K);
    test_buf_printf (&csv, "y,x,g,w\n");
    for (size_t i = 0; i < N; i++) {
      const double mu = exp (1.2 + 0.9 * (x[i] = gsl_rng_uniform (r)));
      const double a = K == 1 ? 1.0 : 0.5 + (double) (i % 4);
      double y;
      g[i] = (int) (i % 3);
      y = K == 0 ? gsl_ran_gamma (r, 2.0 * a, mu / (2.0 * a))
          : K == 1 ? (double) gsl_ran_poisson (r, mu * (1 + 0.3 * g[i]))
          : mu + gsl_ran_gaussian (r, 1.0 / sqrt (a));
      test_buf_printf (&csv, "%.17g,%.17g,%c,%.17g\n", y, x[i], "pqr"[g[i]], a);
    }
    test_job_csv (&j, &csv, cat, 1, "y", "x, g", K == 1 ? NULL : "w", NULL);
    if (K == 2)
      job_fit (&j, BL_METHOD_OLS, &bl_family_gaussian, &bl_link_identity);
    else
      job_fit (&j, BL_METHOD_GLM, fam[K], &bl_link_log);
    st = bl_fit_stats_get (j.f);
    t = bl_resid_table_new (j.f, r, NULL, &err);
    ck_assert_msg (t != NULL, "resid table %s: %s", bl_family_name (fam[K]), err.msg);
    ck_assert_uint_eq (t->n, N);
    {
      gsl_matrix *A = gsl_matrix_alloc (N, 4), *Qm = gsl_matrix_alloc (N, N);
      gsl_matrix *R = gsl_matrix_alloc (N, 4);
      gsl_vector *tau = gsl_vector_alloc (4);
      const double *w = bl_fit_working_w (j.f);
      double worst = 0.0;
      for (size_t i = 0; i < N; i++) {
        const double row[4] = { 1.0, x[i], g[i] == 1, g[i] == 2 };
        for (size_t k = 0; k < 4; k++)
          gsl_matrix_set (A, i, k, sqrt (w[i]) * row[k]);
      }
      ck_assert_int_eq (gsl_linalg_QR_decomp (A, tau), GSL_SUCCESS);
      ck_assert_int_eq (gsl_linalg_QR_unpack (A, tau, Qm, R), GSL_SUCCESS);
      for (size_t i = 0; i < N; i++) {
        double h = 0.0;
        for (size_t k = 0; k < 4; k++)
          h += gsl_matrix_get (Qm, i, k) * gsl_matrix_get (Qm, i, k);
        worst = GSL_MAX (worst, fabs (h - t->leverage[i]));
        lev += t->leverage[i];
        dev += t->deviance[i] * t->deviance[i];
      }
      ck_assert_msg (worst <= 1e-12, "resid table %s: leverage vs QR %.3g",
                     bl_family_name (fam[K]), worst);
      gsl_matrix_free (A);
      gsl_matrix_free (Qm);
      gsl_matrix_free (R);
      gsl_vector_free (tau);
    }
    ck_assert_uint_eq (st->rank, 4);
    ck_assert_msg (fabs (lev - (double) st->rank) <= 1e-10, "resid table %s: sum h %.15g",
                   bl_family_name (fam[K]), lev);
    ck_assert_msg (test_rel_safe (dev, st->deviance) <= 1e-12,
                   "resid table %s: sum d^2 %.17g vs D %.17g", bl_family_name (fam[K]), dev,
                   st->deviance);
    for (size_t i = 0; i < N; i++) {
      const double y = bl_fit_y (j.f)[i], mu = bl_fit_mu (j.f)[i];
      const double phi = K == 1 ? 1.0 : st->phi_pearson, h = t->leverage[i];
      const double cook = t->pearson[i] * t->pearson[i] * h / (phi * 4.0 * (1 - h) * (1 - h));
      ck_assert_msg (test_rel_safe (t->cooks[i], cook) <= 1e-12, "resid table %s: cooks[%zu]",
                     bl_family_name (fam[K]), i);
      ck_assert_msg (t->response[i] == y - mu, "resid table %s: response[%zu]",
                     bl_family_name (fam[K]), i);
      ck_assert_msg ((t->deviance[i] >= 0) == (y >= mu), "resid table %s: sign[%zu]",
                     bl_family_name (fam[K]), i);
    }
    if (K == 2) {                    /* Cook's deletion definition, for OLS (prior weights) */
      const double *wts = bl_fit_prior_w (j.f);
      const double s2 = st->phi_pearson;
      for (size_t del = 0; del < N; del += 37) {
        gsl_matrix *A = gsl_matrix_alloc (N - 1, 4), *cv = gsl_matrix_alloc (4, 4);
        gsl_vector *yy = gsl_vector_alloc (N - 1), *ww = gsl_vector_alloc (N - 1);
        gsl_vector *b = gsl_vector_alloc (4);
        gsl_multifit_linear_workspace *mw = gsl_multifit_linear_alloc (N - 1, 4);
        double chisq, num = 0.0;
        for (size_t i = 0, m = 0; i < N; i++) {
          const double row[4] = { 1.0, x[i], g[i] == 1, g[i] == 2 };
          if (i == del)
            continue;
          for (size_t k = 0; k < 4; k++)
            gsl_matrix_set (A, m, k, row[k]);
          gsl_vector_set (yy, m, bl_fit_y (j.f)[i]);
          gsl_vector_set (ww, m, wts[i]);
          m++;
        }
        ck_assert_int_eq (gsl_multifit_wlinear (A, ww, yy, b, cv, &chisq, mw), GSL_SUCCESS);
        for (size_t i = 0; i < N; i++) {
          const double row[4] = { 1.0, x[i], g[i] == 1, g[i] == 2 };
          double yi = 0.0;
          for (size_t k = 0; k < 4; k++)
            yi += row[k] * gsl_vector_get (b, k);
          num += wts[i] * (bl_fit_mu (j.f)[i] - yi) * (bl_fit_mu (j.f)[i] - yi);
        }
        ck_assert_msg (test_rel_safe (t->cooks[del], num / (4.0 * s2)) <= 1e-8,
                       "cooks deletion row %zu: %.17g vs %.17g", del, t->cooks[del],
                       num / (4.0 * s2));
        gsl_matrix_free (A);
        gsl_matrix_free (cv);
        gsl_vector_free (yy);
        gsl_vector_free (ww);
        gsl_vector_free (b);
        gsl_multifit_linear_free (mw);
      }
    }
    {
      /* a set cancel flag: the table is refused (BL_ECANCEL, nothing returned) and its CSV
         writer stops at once (the caller discards the temporary it wrote to) */
      volatile sig_atomic_t stop = 1;
      bl_err e2 = { 0 };
      FILE *null = fopen ("/dev/null", "w");
      ck_assert_ptr_null (bl_resid_table_new (j.f, r, &stop, &e2));
      ck_assert_int_eq (e2.code, BL_ECANCEL);
      ck_assert_msg (strstr (e2.msg, "cancelled"), "resid table cancel: '%s'", e2.msg);
      ck_assert_ptr_nonnull (null);
      memset (&e2, 0, sizeof e2);
      ck_assert_int_eq (bl_report_residuals_csv (null, j.f, t, &stop, &e2), BL_ECANCEL);
      stop = 0;
      ck_assert_int_eq (bl_report_residuals_csv (null, j.f, t, &stop, &e2), BL_OK);
      fclose (null);
    }
    bl_resid_table_free (t);
    bl_resid_table_free (NULL);
    test_job_free (&j);
    free (csv.s);
  }
  gsl_rng_free (r);
}
END_TEST

/* ---------------------------------------------------------------- errors */

/* A fit that did not converge: BL_ENOCONV, where "diagnose", and nothing returned. */
START_TEST (diag_error_not_converged)
{
  test_buf csv = { 0 };
  test_job j = { 0 };
  bl_err err = { 0 };
  bl_fit_opts fo;
  bl_diag_opts dopt;
  sim_family (&csv, 1, 300, 3);
  test_job_csv (&j, &csv, NULL, 0, "y", "x", NULL, NULL);
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_gamma;
  fo.link = &bl_link_log;
  fo.irls.max_iter = 1;
  j.f = bl_fit_new (j.d, &fo, &err);
  ck_assert_ptr_nonnull (j.f);
  ck_assert_msg (!bl_fit_stats_get (j.f)->converged, "not converged: it converged");
  bl_diag_opts_init (&dopt);
  ck_assert_ptr_null (bl_diag_new (j.f, &dopt, &err));
  ck_assert_int_eq (err.code, BL_ENOCONV);
  ck_assert_str_eq (err.where, "diagnose");
  ck_assert_msg (strstr (err.msg, "did not converge") != NULL, "not converged: msg '%s'",
                 err.msg);
  bl_diag_free (NULL);
  test_job_free (&j);
  free (csv.s);
}
END_TEST

/* The N-th allocation fails for N = 1, 2, ... until the call succeeds: BL_ENOMEM each time
   (SQLite's malloc tests).  Only in a build with --enable-alloc-fail; otherwise the counter
   stays 0 and the loop ends at once. */
START_TEST (diag_error_alloc_failure)
{
  test_buf csv = { 0 };
  test_job j = { 0 };
  bl_diag_opts dopt;
  unsigned long nfail = 0;
  sim_family (&csv, 1, 250, 17);
  test_job_csv (&j, &csv, NULL, 0, "y", "x", NULL, NULL);
  job_fit (&j, BL_METHOD_GLM, &bl_family_gamma, &bl_link_log);
  bl_diag_opts_init (&dopt);
  dopt.null_reps = 50;
  for (unsigned long k = 1; k < 10000; k++) {
    bl_err err = { 0 };
    bl_diag *dg;
    bl_resid_table *t;
    bl_alloc_fail_at (k);
    dg = bl_diag_new (j.f, &dopt, &err);
    if (dg) {
      bl_diag_free (dg);
      bl_alloc_fail_at (k);
      t = bl_resid_table_new (j.f, NULL, NULL, &err);
      if (t) {
        bl_resid_table_free (t);
        if (bl_alloc_count () < k)
          break;
        continue;
      }
    }
    if (!dg || !t) {
      ck_assert_msg (err.code == BL_ENOMEM, "alloc failure %lu: code %d (%s)", k, err.code,
                     err.msg);
      nfail++;
    }
    if (bl_alloc_count () == 0)
      break;                         /* not a fault-injection build */
  }
  bl_alloc_fail_at (0);
  fprintf (stderr, "diag allocation failures provoked: %lu\n", nfail);
  test_job_free (&j);
  free (csv.s);
}
END_TEST

/* ---------------------------------------------------------------- basics */

/* Constant-variance normal data, OLS with one covariate: the spread ratio flags at most 5% of
   1000 seeded replicates at n = 100 and at n = 1000 (null95 is the 95% point, and the ratio
   must also reach 2).  The rates are printed. */
START_TEST (diag_spread_false_flags)
{
  static const size_t sizes[] = { 100, 1000 };
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  for (size_t s = 0; s < 2; s++) {
    const size_t n = sizes[s], reps = 1000;
    size_t flags = 0, over95 = 0;
    for (size_t rep = 0; rep < reps; rep++) {
      test_buf csv = { 0 };
      test_job j = { 0 };
      bl_err err = { 0 };
      bl_diag_opts dopt;
      bl_diag *dg;
      gsl_rng_set (r, 100000u * (unsigned) s + (unsigned) rep);
      test_buf_printf (&csv, "y,x\n");
      for (size_t i = 0; i < n; i++) {
        const double x = gsl_rng_uniform (r);
        test_buf_printf (&csv, "%.17g,%.17g\n", 3.1 + 2.2 * x + gsl_ran_gaussian (r, 0.8), x);
      }
      test_job_csv (&j, &csv, NULL, 0, "y", "x", NULL, NULL);
      job_fit (&j, BL_METHOD_OLS, &bl_family_gaussian, &bl_link_identity);
      bl_diag_opts_init (&dopt);
      dopt.seed = 7u + (unsigned long) rep;
      dopt.null_reps = 1000;
      dg = bl_diag_new (j.f, &dopt, &err);
      ck_assert_msg (dg != NULL, "false flags: %s", err.msg);
      flags += (size_t) bl_diag_get (dg)->spread.flag;
      over95 += bl_diag_get (dg)->spread.ratio > bl_diag_get (dg)->spread.null95;
      bl_diag_free (dg);
      test_job_free (&j);
      free (csv.s);
    }
    fprintf (stderr, "spread false-flag rate n=%zu: %zu/%zu (ratio above null95 alone: "
             "%zu/%zu)\n", n, flags, reps, over95, reps);
    ck_assert_msg (flags <= reps / 20, "false flags n=%zu: %zu of %zu", n, flags, reps);
  }
  gsl_rng_free (r);
}
END_TEST

/* The variance power (diag.h; the log-log mean-variance slope): gamma data (Var = phi mu^2)
   give an estimate within 3 se of 2 and suggest "gamma"; poisson counts "poisson";
   constant-variance continuous data "gaussian". */
START_TEST (diag_power_families)
{
  static const char *const want[] = { "gaussian", "gamma", "poisson" };
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  for (int K = 0; K < 3; K++) {
    enum { N = 4000 };
    test_buf csv = { 0 };
    test_job j = { 0 };
    bl_err err = { 0 };
    bl_diag_opts dopt;
    bl_diag *dg;
    const bl_power *pw;
    gsl_rng_set (r, 300u + (unsigned) K);
    test_buf_printf (&csv, "y,x\n");
    for (size_t i = 0; i < N; i++) {
      const double x = gsl_rng_uniform (r), mu = exp (0.5 + 2.0 * x);
      const double y = K == 0 ? mu + gsl_ran_gaussian (r, 1.5)
                       : K == 1 ? gsl_ran_gamma (r, 4.0, mu / 4.0)
                       : (double) gsl_ran_poisson (r, mu);
      test_buf_printf (&csv, "%.17g,%.17g\n", y, x);
    }
    test_job_csv (&j, &csv, NULL, 0, "y", "x", NULL, NULL);
    if (K == 0)
      job_fit (&j, BL_METHOD_GLM, &bl_family_gaussian, &bl_link_log);
    else
      job_fit (&j, BL_METHOD_GLM, K == 1 ? &bl_family_gamma : &bl_family_poisson,
               &bl_link_log);
    bl_diag_opts_init (&dopt);
    dopt.null_reps = 100;
    dg = bl_diag_new (j.f, &dopt, &err);
    ck_assert_msg (dg != NULL, "power %s: %s", want[K], err.msg);
    pw = &bl_diag_get (dg)->power;
    fprintf (stderr, "variance power, %s data: %.3f (se %.3f), %zu groups, suggested %s\n",
             want[K], pw->estimate, pw->se, pw->groups_used, pw->suggested);
    ck_assert_msg (pw->done, "power %s: not done: %s", want[K], pw->why);
    ck_assert_uint_eq (pw->groups_used, 20);
    ck_assert_msg (pw->lo < pw->estimate && pw->estimate < pw->hi, "power %s: interval",
                   want[K]);
    if (K == 1)
      ck_assert_msg (fabs (pw->estimate - 2.0) <= 3.0 * pw->se, "power gamma: %.3f se %.3f",
                     pw->estimate, pw->se);
    ck_assert_msg (pw->suggested && strcmp (pw->suggested, want[K]) == 0,
                   "power %s: suggested %s", want[K], pw->suggested);
    bl_diag_free (dg);
    test_job_free (&j);
    free (csv.s);
  }
  gsl_rng_free (r);
}
END_TEST

/* Fewer than 200 rows: not done, with the reason; 200 rows: 10 groups.  Groups whose mean
   fitted value is <= 0 are left out and counted (the count recomputed here from the sorted
   fitted values and the group boundaries floor(g n / G)). */
START_TEST (diag_power_rows_and_left_out)
{
  static const size_t sizes[] = { 199, 200, 400 };
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  for (size_t s = 0; s < 3; s++) {
    const size_t n = sizes[s];
    test_buf csv = { 0 };
    test_job j = { 0 };
    bl_err err = { 0 };
    bl_diag_opts dopt;
    bl_diag *dg;
    const bl_power *pw;
    gsl_rng_set (r, 41u + (unsigned) s);
    test_buf_printf (&csv, "y,x\n");
    for (size_t i = 0; i < n; i++) {
      const double x = gsl_rng_uniform (r);
      test_buf_printf (&csv, "%.17g,%.17g\n", -4.0 + 12.0 * x + gsl_ran_gaussian (r, 1.0), x);
    }
    test_job_csv (&j, &csv, NULL, 0, "y", "x", NULL, NULL);
    job_fit (&j, BL_METHOD_OLS, &bl_family_gaussian, &bl_link_identity);
    bl_diag_opts_init (&dopt);
    dopt.null_reps = 100;
    dg = bl_diag_new (j.f, &dopt, &err);
    ck_assert_msg (dg != NULL, "power n=%zu: %s", n, err.msg);
    pw = &bl_diag_get (dg)->power;
    if (n < 200) {
      ck_assert_msg (!pw->done && isnan (pw->estimate) && pw->suggested == NULL,
                     "power n=%zu: done", n);
      ck_assert_msg (strstr (pw->why, "fewer than 200 rows") != NULL, "power n=%zu: why '%s'",
                     n, pw->why);
    } else {
      const size_t G = n / 20 > 20 ? 20 : n / 20;
      size_t *ord = malloc (n * sizeof *ord), left = 0;
      order_direct (bl_fit_mu (j.f), n, ord);
      for (size_t g = 0; g < G; g++) {
        double sm = 0.0;
        for (size_t k = g * n / G; k < (g + 1) * n / G; k++)
          sm += bl_fit_mu (j.f)[ord[k]];
        left += !(sm > 0.0);
      }
      fprintf (stderr, "variance power n=%zu: %zu groups used, %zu left out\n", n,
               pw->groups_used, pw->groups_left_out);
      ck_assert_msg (left > 0, "power n=%zu: no group with mean fitted <= 0", n);
      ck_assert_uint_eq (pw->groups_left_out, left);
      ck_assert_uint_eq (pw->groups_used, G - left);
      ck_assert_msg (pw->done, "power n=%zu: not done: %s", n, pw->why);
      free (ord);
    }
    bl_diag_free (dg);
    test_job_free (&j);
    free (csv.s);
  }
  gsl_rng_free (r);
}
END_TEST

/* Lack of fit (diag.h): a quadratic truth fitted by a line is flagged; the correct model on
   n = 2000 seeded data is flagged in at most 1 of 20 seeds. */
START_TEST (diag_lack_of_fit)
{
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  size_t flagged = 0;
  for (size_t seed = 0; seed <= 20; seed++) {
    const int quad = seed == 20;
    const size_t n = quad ? 500 : 2000;
    test_buf csv = { 0 };
    test_job j = { 0 };
    bl_err err = { 0 };
    bl_diag_opts dopt;
    bl_diag *dg;
    gsl_rng_set (r, 900u + (unsigned) seed);
    test_buf_printf (&csv, "y,x\n");
    for (size_t i = 0; i < n; i++) {
      const double x = 2.0 * gsl_rng_uniform (r);
      const double y = 1.3 + 0.7 * x + (quad ? 1.9 * x * x : 0.0) + gsl_ran_gaussian (r, 1.0);
      test_buf_printf (&csv, "%.17g,%.17g\n", y, x);
    }
    test_job_csv (&j, &csv, NULL, 0, "y", "x", NULL, NULL);
    job_fit (&j, BL_METHOD_OLS, &bl_family_gaussian, &bl_link_identity);
    bl_diag_opts_init (&dopt);
    dopt.null_reps = 100;
    dg = bl_diag_new (j.f, &dopt, &err);
    ck_assert_msg (dg != NULL, "lack of fit: %s", err.msg);
    if (quad) {
      const bl_lof *lof = &bl_diag_get (dg)->lof;
      ck_assert_msg (lof->flag, "lack of fit: quadratic truth not flagged");
      ck_assert_uint_eq (lof->ngroups, 20);       /* 10 bins of fitted, 10 of x */
      ck_assert_str_eq (lof->groups[0].against, "fitted");
      ck_assert_str_eq (lof->groups[10].against, "x");
    } else {
      flagged += (size_t) bl_diag_get (dg)->lof.flag;
    }
    bl_diag_free (dg);
    test_job_free (&j);
    free (csv.s);
  }
  fprintf (stderr, "lack of fit, correct model: %zu of 20 seeds flagged\n", flagged);
  ck_assert_msg (flagged <= 1, "lack of fit: correct model flagged in %zu of 20", flagged);
  gsl_rng_free (r);
}
END_TEST

static Suite *
diag_suite (void)
{
  Suite *s = suite_create ("diag");
  TCase *ref = tcase_create ("reference");
  TCase *idt = tcase_create ("identities");
  TCase *err = tcase_create ("errors");
  TCase *bas = tcase_create ("basics");
  tcase_add_test (ref, diag_variance_tests_gsl);
  tcase_add_test (ref, diag_quantile_far_tail);
  tcase_add_test (ref, diag_white_skipped);
  tcase_add_test (ref, diag_quantile_continuous);
  tcase_add_test (ref, diag_ks_normal);
  tcase_add_test (ref, diag_quantile_poisson);
  tcase_add_test (idt, diag_spread_groups_ties);
  tcase_add_test (idt, diag_spread_null95_simulated);
  tcase_add_test (idt, diag_spread_flag_rule);
  tcase_add_test (idt, diag_resid_table_identities);
  tcase_add_test (err, diag_error_not_converged);
  tcase_add_test (err, diag_error_alloc_failure);
  tcase_add_test (bas, diag_spread_false_flags);
  tcase_add_test (bas, diag_power_families);
  tcase_add_test (bas, diag_power_rows_and_left_out);
  tcase_add_test (bas, diag_lack_of_fit);
  /* the simulations take seconds natively and much longer under the sanitizers */
  tcase_set_timeout (ref, 120);
  tcase_set_timeout (idt, 120);
  tcase_set_timeout (err, 120);
  tcase_set_timeout (bas, 600);
  suite_add_tcase (s, ref);
  suite_add_tcase (s, idt);
  suite_add_tcase (s, err);
  suite_add_tcase (s, bas);
  return s;
}

int
main (void)
{
  return test_run_suite (diag_suite (), 1);
}
