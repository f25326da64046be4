/* check_nested.c -- the likelihood-ratio test of nested models (nested.h), cluster-robust
   standard errors (vcov.c, bl_fit_opts.se = BL_SE_CLUSTER) and the Brown-Forsythe test of
   equal spread (diag.h, bl_brown_forsythe).

   Fits go through the public pipeline of tests/check_irls.c: bl_table_read_mem ->
   bl_terms_parse -> bl_design_new -> bl_fit_new, on data simulated here with GSL generators
   and fixed seeds.  The checks, each with its source beside it:
   - reference: the deviance difference of two fits made here (McCullagh & Nelder 1989,
     Generalized Linear Models, 2nd ed., section 4.4.3) with GSL's chi-square and F tails;
     the cluster sandwich (CR2, with the m_c x m_c matrices) and the Brown-Forsythe F
     computed directly in the test;
   - identities: one observation per cluster gives HC2 (CR2); a numeric and a categorical cluster
     column naming the same partition give the same errors;
   - errors: every error path of bl_nested_test, bl_fit_sandwich_cluster and
     bl_brown_forsythe that a caller can reach, with its code, where and message. */
#include <check.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_sf_erf.h>
#include "design.h"
#include "diag.h"
#include "fit.h"
#include "table.h"
#include "terms.h"
#include "testutil.h"

/* ---------------------------------------------------------------- helpers */

typedef struct job {
  bl_table *t;
  bl_terms *terms;
  bl_design *d;
  bl_fit *f;
} job;

static void
job_free (job *j)
{
  bl_fit_free (j->f);
  bl_design_free (j->d);
  bl_terms_free (j->terms);
  bl_table_free (j->t);
  memset (j, 0, sizeof *j);
}

typedef struct sbuf { char *s; size_t len, cap; } sbuf;

static void
sb_printf (sbuf *b, const char *fmt, ...)
{
  va_list ap;
  int k;
  if (b->cap - b->len < 256) {
    b->cap = b->cap ? 2 * b->cap : 1 << 16;
    b->s = realloc (b->s, b->cap);
    ck_assert_msg (b->s != NULL, "sbuf: out of memory");
  }
  va_start (ap, fmt);
  k = vsnprintf (b->s + b->len, b->cap - b->len, fmt, ap);
  va_end (ap);
  ck_assert_msg (k >= 0 && (size_t) k < b->cap - b->len, "sbuf: line too long");
  b->len += (size_t) k;
}

static const char *const cat_cols[] = { "g", "cl" };

/* Read CSV (categorical g and cl) and build the design of RESP on TERMS, weights WEIGHTS. */
static void
job_design (job *j, const sbuf *csv, const char *resp, const char *terms, const char *weights)
{
  bl_err err = { 0 };
  bl_design_opts dopt;
  bl_table_opts to;
  bl_table_opts_init (&to);
  to.categorical = cat_cols;
  to.n_categorical = 2;
  j->t = bl_table_read_mem (csv->s, csv->len, "sim.csv", &to, &err);
  ck_assert_msg (j->t != NULL, "read: %s: %s", err.where, err.msg);
  j->terms = bl_terms_parse (terms, "--terms", &err);
  ck_assert_msg (j->terms != NULL, "parse '%s': %s", terms, err.msg);
  bl_design_opts_init (&dopt);
  dopt.weights = weights;
  j->d = bl_design_new (j->t, resp, j->terms, &dopt, &err);
  ck_assert_msg (j->d != NULL, "design '%s': %s: %s", terms, err.where, err.msg);
}

static const bl_fit *
job_fit (job *j, const bl_fit_opts *fo)
{
  bl_err err = { 0 };
  j->f = bl_fit_new (j->d, fo, &err);
  ck_assert_msg (j->f != NULL, "fit %s: %s: %s", fo->fam ? bl_family_name (fo->fam) : "gaussian",
                 err.where, err.msg);
  ck_assert_msg (bl_fit_stats_get (j->f)->converged, "fit did not converge: %s",
                 bl_fit_status (j->f)->msg);
  return j->f;
}

static double
rel (double a, double b)
{
  return fabs (a - b) / (fabs (b) > 1e-300 ? fabs (b) : 1.0);
}

/* Simulated rows: x1, x2, x3 uniform(0, 1); a group g (4 levels, uneven) and a cluster cl
   (13 levels); weights w uniform(0.5, 2); y poisson (KIND 0, log mu = 0.4 + 0.8 x1 - 0.5 x2
   + 0.3 x3, a cluster effect N(0, 0.3^2) on log mu) or gamma (KIND 1, shape 3, the same mean,
   with the spread depending on g).  x3 is missing ("NA") on every row i with i % 17 == 5.
   DROP nonzero leaves those rows out altogether (the larger model's row set). */
typedef struct rows {
  size_t n;
  double y[400], x1[400], x2[400], x3[400], w[400];
  int g[400], cl[400];
} rows;

static void
sim_rows (rows *r, int kind, size_t n, unsigned long seed)
{
  gsl_rng *g = gsl_rng_alloc (gsl_rng_mt19937);
  double ce[13];
  gsl_rng_set (g, seed);
  for (size_t c = 0; c < 13; c++)
    ce[c] = gsl_ran_gaussian (g, 0.3);
  r->n = n;
  for (size_t i = 0; i < n; i++) {
    double mu;
    r->x1[i] = gsl_rng_uniform (g);
    r->x2[i] = gsl_rng_uniform (g);
    r->x3[i] = i % 17 == 5 ? NAN : gsl_rng_uniform (g);
    r->w[i] = 0.5 + 1.5 * gsl_rng_uniform (g);
    r->g[i] = (int) gsl_rng_uniform_int (g, 10) % 4;      /* 0..3, uneven */
    r->cl[i] = (int) gsl_rng_uniform_int (g, 13);
    mu = exp (0.4 + 0.8 * r->x1[i] - 0.5 * r->x2[i] + 0.3 * (isnan (r->x3[i]) ? 0.5 : r->x3[i])
              + ce[r->cl[i]]);
    r->y[i] = kind == 0 ? (double) gsl_ran_poisson (g, mu)
                        : gsl_ran_gamma (g, 3.0 / (1.0 + r->g[i]), mu * (1.0 + r->g[i]) / 3.0);
  }
  gsl_rng_free (g);
}

static void
rows_csv (const rows *r, int drop, sbuf *b)
{
  b->len = 0;
  sb_printf (b, "y,x1,x2,x3,w,g,cl,cln,id\n");
  for (size_t i = 0; i < r->n; i++) {
    if (drop && isnan (r->x3[i]))
      continue;
    sb_printf (b, "%.17g,%.17g,%.17g,", r->y[i], r->x1[i], r->x2[i]);
    if (isnan (r->x3[i]))
      sb_printf (b, "NA,");
    else
      sb_printf (b, "%.17g,", r->x3[i]);
    sb_printf (b, "%.17g,%c,c%d,%d,%zu\n", r->w[i], "pqrs"[r->g[i]], r->cl[i],
               100 + 7 * r->cl[i], i);
  }
}

static bl_terms *
terms_of (const char *text)
{
  bl_err err = { 0 };
  bl_terms *t = bl_terms_parse (text, "--against", &err);
  ck_assert_msg (t != NULL, "parse '%s': %s", text, err.msg);
  return t;
}

/* ---------------------------------------------------------------- nested: reference */

/* The test of FAM's fit of "x1,x2,x3" against the smaller "x1" (bl_nested_test, which fits
   it on the larger model's rows) against a fit of "x1" made here on a table holding exactly
   those rows (the rows where x3 is missing left out): the statistic is the difference of the
   two reported deviances (McCullagh & Nelder 1989, section 4.4.3), with
   - poisson (dispersion fixed): chi-square on rank_big - rank_small = 2, p = gsl_cdf_chisq_Q;
   - gamma (dispersion estimated): F = ((D_small - D_big) / 2) / phi, phi the larger model's
     Pearson dispersion, on (2, n - 4), p = gsl_cdf_fdist_Q;
   - poisson with the Pearson dispersion (dispersion_pearson): the F form as for gamma. */
static void
check_lr (int kind, int pearson, const char *name)
{
  rows *r = malloc (sizeof *r);
  sbuf all = { 0 }, kept = { 0 };
  job big = { 0 }, small = { 0 };
  bl_fit_opts fo;
  bl_design_opts dopt;
  bl_nested nt;
  bl_err err = { 0 };
  bl_terms *st;
  const bl_fit_stats *sb, *ss;
  double dd;
  ck_assert (r != NULL);
  sim_rows (r, kind, 300, 31u + (unsigned long) kind);
  rows_csv (r, 0, &all);
  rows_csv (r, 1, &kept);
  bl_fit_opts_init (&fo);
  fo.fam = kind == 0 ? &bl_family_poisson : &bl_family_gamma;
  fo.link = &bl_link_log;
  fo.dispersion_pearson = pearson;
  job_design (&big, &all, "y", "x1,x2,x3", "w");
  job_fit (&big, &fo);
  job_design (&small, &kept, "y", "x1", "w");
  job_fit (&small, &fo);
  sb = bl_fit_stats_get (big.f);
  ss = bl_fit_stats_get (small.f);
  ck_assert_msg (sb->n == ss->n && sb->n < 300, "%s: rows %zu and %zu", name, sb->n, ss->n);
  st = terms_of ("x1");
  bl_design_opts_init (&dopt);
  dopt.weights = "w";
  ck_assert_msg (bl_nested_test (big.f, big.t, st, &dopt, &fo, &nt, &err) == BL_OK,
                 "%s: %s: %s", name, err.where, err.msg);
  dd = ss->deviance - sb->deviance;
  ck_assert_msg (strcmp (nt.terms, "x1") == 0, "%s: terms '%s'", name, nt.terms);
  ck_assert_msg (nt.dof == 2, "%s: dof %zu", name, nt.dof);
  ck_assert_msg (rel (nt.deviance_small, ss->deviance) <= 1e-10
                 && nt.deviance_big == sb->deviance, "%s: deviances %.17g %.17g, fits %.17g "
                 "%.17g", name, nt.deviance_small, nt.deviance_big, ss->deviance, sb->deviance);
  if (kind == 0 && !pearson) {
    ck_assert_msg (strcmp (nt.form, "chisq") == 0 && nt.dof2 == 0, "%s: form %s", name,
                   nt.form);
    ck_assert_msg (rel (nt.stat, dd) <= 1e-9, "%s: stat %.17g, deviance difference %.17g",
                   name, nt.stat, dd);
    ck_assert_msg (rel (nt.p, gsl_cdf_chisq_Q (dd, 2.0)) <= 1e-8, "%s: p %.17g, GSL %.17g",
                   name, nt.p, gsl_cdf_chisq_Q (dd, 2.0));
  } else {
    const double F = (dd / 2.0) / sb->phi_pearson;
    ck_assert_msg (strcmp (nt.form, "F") == 0 && nt.dof2 == sb->n - 4, "%s: form %s dof2 %zu",
                   name, nt.form, nt.dof2);
    ck_assert_msg (rel (nt.stat, F) <= 1e-9, "%s: F %.17g, direct %.17g", name, nt.stat, F);
    ck_assert_msg (rel (nt.p, gsl_cdf_fdist_Q (F, 2.0, (double) (sb->n - 4))) <= 1e-8,
                   "%s: p %.17g, GSL %.17g", name, nt.p,
                   gsl_cdf_fdist_Q (F, 2.0, (double) (sb->n - 4)));
  }
  ck_assert_msg (nt.p > 0.0 && nt.p < 1.0, "%s: p %g", name, nt.p);
  bl_terms_free (st);
  job_free (&big);
  job_free (&small);
  free (all.s);
  free (kept.s);
  free (r);
}

START_TEST (nested_poisson_chisq) { check_lr (0, 0, "poisson chisq"); }
END_TEST
START_TEST (nested_gamma_f) { check_lr (1, 0, "gamma F"); }
END_TEST
START_TEST (nested_poisson_pearson_f) { check_lr (0, 1, "poisson pearson F"); }
END_TEST

/* A p-value far below the doubles: poisson, log mu = 1 + 4 x1, tested against "x2" (1 dof).
   The deviance difference is in the thousands; its chi-square p on 1 dof is
   erfc(sqrt(x / 2)) (Abramowitz & Stegun 26.4.4 with 7.1.2), so log10 p is checked against
   GSL's log erfc (its own algorithm), p is 0 (the correctly rounded double: below 4.9e-324)
   and log10_p is finite (methods.md, section 17). */
START_TEST (nested_tiny_p)
{
  sbuf csv = { 0 };
  job big = { 0 };
  bl_fit_opts fo;
  bl_design_opts dopt;
  bl_nested nt;
  bl_err err = { 0 };
  bl_terms *st;
  gsl_rng *g = gsl_rng_alloc (gsl_rng_mt19937);
  double want;
  gsl_rng_set (g, 8080);
  sb_printf (&csv, "y,x1,x2,g,cl\n");
  for (size_t i = 0; i < 400; i++) {
    const double x1 = gsl_rng_uniform (g), x2 = gsl_rng_uniform (g);
    sb_printf (&csv, "%u,%.17g,%.17g,p,c1\n", gsl_ran_poisson (g, exp (1.0 + 4.0 * x1)), x1, x2);
  }
  gsl_rng_free (g);
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_poisson;
  fo.link = &bl_link_log;
  job_design (&big, &csv, "y", "x1,x2", NULL);
  job_fit (&big, &fo);
  st = terms_of ("x2");
  bl_design_opts_init (&dopt);
  ck_assert_msg (bl_nested_test (big.f, big.t, st, &dopt, &fo, &nt, &err) == BL_OK, "%s: %s",
                 err.where, err.msg);
  want = gsl_sf_log_erfc (sqrt (nt.stat / 2.0)) / M_LN10;
  fprintf (stderr, "tiny p: chi-square %.6g on %zu dof, p %g, log10 p %.10f (erfc %.10f)\n",
           nt.stat, nt.dof, nt.p, nt.log10_p, want);
  ck_assert_msg (nt.dof == 1 && nt.stat > 2000.0, "tiny p: stat %g dof %zu", nt.stat, nt.dof);
  ck_assert_msg (rel (nt.log10_p, want) <= 1e-12, "tiny p: log10 %.17g, erfc %.17g",
                 nt.log10_p, want);
  ck_assert_msg (nt.p == 0.0 && isfinite (nt.log10_p) && nt.log10_p < -323.0, "tiny p: %g",
                 nt.p);
  bl_terms_free (st);
  job_free (&big);
  free (csv.s);
}
END_TEST

/* The negative binomial with theta estimated in each model: the deviances are at different
   theta, so the statistic is the likelihood ratio 2 (l_big - l_small) of the two fits (made
   here on the same rows), chi-square on the rank difference (Wilks 1938, Ann. Math. Statist.
   9, 60-62), p from gsl_cdf_chisq_Q.  (Before the fix in nested.c the deviance difference was
   reported: -0.053 with p = 1 on tests/data/nb_counts.csv where the likelihood ratio is
   2.04.)  With theta fixed the deviances share it and their difference is the statistic. */
START_TEST (nested_negbin_lr)
{
  rows *r = malloc (sizeof *r);
  gsl_rng *g = gsl_rng_alloc (gsl_rng_mt19937);
  sbuf all = { 0 }, kept = { 0 };
  ck_assert (r != NULL && g != NULL);
  sim_rows (r, 0, 300, 4242);
  gsl_rng_set (g, 4243);
  for (size_t i = 0; i < r->n; i++) {        /* overdispersed counts: NB with theta 1.8 */
    const double mu = exp (0.4 + 0.8 * r->x1[i] - 0.5 * r->x2[i]);
    r->y[i] = (double) gsl_ran_negative_binomial (g, 1.8 / (1.8 + mu), 1.8);
  }
  gsl_rng_free (g);
  rows_csv (r, 0, &all);
  rows_csv (r, 1, &kept);
  for (int fixed = 0; fixed < 2; fixed++) {
    job big = { 0 }, small = { 0 };
    bl_fit_opts fo;
    bl_design_opts dopt;
    bl_nested nt;
    bl_err err = { 0 };
    bl_terms *st = terms_of ("x1");
    double want;
    bl_fit_opts_init (&fo);
    fo.fam = &bl_family_negbin;
    fo.fam_par_est = !fixed;
    fo.fam_par = 2.2;
    job_design (&big, &all, "y", "x1,x2,x3", NULL);
    job_fit (&big, &fo);
    job_design (&small, &kept, "y", "x1", NULL);
    job_fit (&small, &fo);
    bl_design_opts_init (&dopt);
    ck_assert_msg (bl_nested_test (big.f, big.t, st, &dopt, &fo, &nt, &err) == BL_OK,
                   "nb lr: %s: %s", err.where, err.msg);
    want = fixed ? bl_fit_stats_get (small.f)->deviance - bl_fit_stats_get (big.f)->deviance
                 : 2.0 * (bl_fit_stats_get (big.f)->loglik - bl_fit_stats_get (small.f)->loglik);
    ck_assert_msg (strcmp (nt.form, "chisq") == 0 && nt.dof == 2, "nb lr: form %s dof %zu",
                   nt.form, nt.dof);
    ck_assert_msg (fabs (nt.stat - want) <= 1e-8 * fmax (1.0, fabs (want)),
                   "nb lr (theta %s): stat %.17g, expected %.17g", fixed ? "fixed" : "estimated",
                   nt.stat, want);
    ck_assert_msg (want > 0.0 && rel (nt.p, gsl_cdf_chisq_Q (want, 2.0)) <= 1e-8,
                   "nb lr: p %.17g, GSL %.17g", nt.p, gsl_cdf_chisq_Q (want, 2.0));
    bl_terms_free (st);
    job_free (&big);
    job_free (&small);
  }
  free (all.s);
  free (kept.s);
  free (r);
}
END_TEST

/* ---------------------------------------------------------------- nested: errors */

static void
expect_nested_error (const char *small, int code, const char *frag, const char *name)
{
  rows *r = malloc (sizeof *r);
  sbuf all = { 0 };
  job big = { 0 };
  bl_fit_opts fo;
  bl_design_opts dopt;
  bl_nested nt;
  bl_err err = { 0 };
  bl_terms *st;
  ck_assert (r != NULL);
  sim_rows (r, 0, 120, 77);
  rows_csv (r, 0, &all);
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_poisson;
  job_design (&big, &all, "y", "x1,x2", NULL);
  job_fit (&big, &fo);
  st = terms_of (small);
  bl_design_opts_init (&dopt);
  ck_assert_msg (bl_nested_test (big.f, big.t, st, &dopt, &fo, &nt, &err) == code,
                 "%s: code %d, expected %d (%s)", name, err.code, code, err.msg);
  ck_assert_msg (err.code == code, "%s: err.code %d", name, err.code);
  ck_assert_msg (strcmp (err.where, "--against") == 0, "%s: where '%s'", name, err.where);
  ck_assert_msg (strstr (err.msg, frag) != NULL, "%s: message '%s' lacks '%s'", name, err.msg,
                 frag);
  bl_terms_free (st);
  job_free (&big);
  free (all.s);
  free (r);
}

START_TEST (nested_errors)
{
  /* a column the larger model does not have: not nested (nested.c) */
  expect_nested_error ("x1,x3", BL_ESPEC, "not nested in the larger: its column 'x3'",
                       "not nested");
  expect_nested_error ("log(x1)", BL_ESPEC, "its column 'log(x1)' is not one of",
                       "not nested transform");
  /* a column that is not in the data: the design's error, named after --against */
  expect_nested_error ("x1,zz", BL_ESPEC, "no column 'zz' in sim.csv", "missing column");
  /* the same columns: the rank is not smaller */
  expect_nested_error ("x2,x1", BL_ESPEC, "is not below the larger model's", "same model");
}
END_TEST

/* ---------------------------------------------------------------- cluster sandwich */

/* The cluster-robust covariance CR2 computed directly, the long way (Bell & McCaffrey 2002,
   Survey Methodology 28, 169-181; McCaffrey & Bell 2006, Statistics in Medicine 25,
   4081-4098): X from the data, the log link's dmu/deta = mu, W = a mu^2 / V(mu), working
   residuals r = (y - mu) / mu, B = X'WX inverted by Cholesky (GSL); for each cluster c the
   m_c x m_c matrix I - H_cc, H_cc = Z_c B^-1 Z_c' with Z_c = W_c^1/2 X_c, its inverse
   square root by GSL's symmetric eigensolver, U_c = Z_c' (I - H_cc)^-1/2 W_c^1/2 r_c, and
   cov = B^-1 (sum U_c U_c') B^-1 (fit_vcov.c never forms the m_c x m_c matrix: it uses the
   q x q identity, so this checks that too).  CL holds each used row's cluster (0..G-1).
   Fills COV (p x p, column-major). */
static void
cluster_direct (const bl_fit *f, const double *const *xc, size_t p, const int *cl, size_t G,
                const bl_family *fam, double *cov)
{
  const size_t n = bl_fit_stats_get (f)->n;
  const double *y = bl_fit_y (f), *mu = bl_fit_mu (f), *a = bl_fit_prior_w (f);
  gsl_matrix *B = gsl_matrix_calloc (p, p), *M = gsl_matrix_calloc (p, p);
  gsl_matrix *T = gsl_matrix_alloc (p, p);
  double *Z = malloc (n * p * sizeof *Z), *e = malloc (n * sizeof *e);
  size_t *idx = malloc (n * sizeof *idx);
  ck_assert (Z && e && idx);
  for (size_t i = 0; i < n; i++) {
    const double w = (a ? a[i] : 1.0) * mu[i] * mu[i] / bl_family_var (fam, mu[i], 0.0);
    e[i] = sqrt (w) * (y[i] - mu[i]) / mu[i];
    for (size_t j = 0; j < p; j++)
      Z[i * p + j] = sqrt (w) * (j == 0 ? 1.0 : xc[j - 1][i]);
    for (size_t j = 0; j < p; j++)
      for (size_t q = 0; q < p; q++)
        *gsl_matrix_ptr (B, j, q) += Z[i * p + j] * Z[i * p + q];
  }
  ck_assert (gsl_linalg_cholesky_decomp1 (B) == GSL_SUCCESS);
  ck_assert (gsl_linalg_cholesky_invert (B) == GSL_SUCCESS);
  for (size_t c = 0; c < G; c++) {
    size_t m = 0;
    for (size_t i = 0; i < n; i++)
      if ((size_t) cl[i] == c)
        idx[m++] = i;
    gsl_matrix *IH = gsl_matrix_alloc (m, m), *V = gsl_matrix_alloc (m, m);
    gsl_vector *ev = gsl_vector_alloc (m);
    gsl_eigen_symmv_workspace *ws = gsl_eigen_symmv_alloc (m);
    double *Ae = malloc (m * sizeof *Ae), U[8] = { 0 };
    ck_assert (p <= 8 && Ae);
    for (size_t r = 0; r < m; r++)
      for (size_t s2 = 0; s2 < m; s2++) {
        double h = 0.0;
        for (size_t j = 0; j < p; j++)
          for (size_t q = 0; q < p; q++)
            h += Z[idx[r] * p + j] * gsl_matrix_get (B, j, q) * Z[idx[s2] * p + q];
        gsl_matrix_set (IH, r, s2, (r == s2 ? 1.0 : 0.0) - h);
      }
    ck_assert (gsl_eigen_symmv (IH, ev, V, ws) == GSL_SUCCESS);
    for (size_t r = 0; r < m; r++) {       /* (I - H)^-1/2 e = V diag(ev^-1/2) V' e */
      double s = 0.0;
      for (size_t k = 0; k < m; k++) {
        double vk = 0.0;
        for (size_t l = 0; l < m; l++)
          vk += gsl_matrix_get (V, l, k) * e[idx[l]];
        s += gsl_matrix_get (V, r, k) * vk / sqrt (gsl_vector_get (ev, k));
      }
      Ae[r] = s;
    }
    for (size_t j = 0; j < p; j++)
      for (size_t r = 0; r < m; r++)
        U[j] += Z[idx[r] * p + j] * Ae[r];
    for (size_t j = 0; j < p; j++)
      for (size_t q = 0; q < p; q++)
        *gsl_matrix_ptr (M, j, q) += U[j] * U[q];
    gsl_matrix_free (IH);
    gsl_matrix_free (V);
    gsl_vector_free (ev);
    gsl_eigen_symmv_free (ws);
    free (Ae);
  }
  /* cov = B^-1 M B^-1 */
  for (size_t j = 0; j < p; j++)
    for (size_t q = 0; q < p; q++) {
      double s = 0.0;
      for (size_t l = 0; l < p; l++)
        s += gsl_matrix_get (M, j, l) * gsl_matrix_get (B, l, q);
      gsl_matrix_set (T, j, q, s);
    }
  for (size_t j = 0; j < p; j++)
    for (size_t q = 0; q < p; q++) {
      double s = 0.0;
      for (size_t l = 0; l < p; l++)
        s += gsl_matrix_get (B, j, l) * gsl_matrix_get (T, l, q);
      cov[j + q * p] = s;
    }
  gsl_matrix_free (B);
  gsl_matrix_free (M);
  gsl_matrix_free (T);
  free (Z);
  free (e);
  free (idx);
}

/* Poisson (no weights) and gamma (prior weights) fits of x1, x2 with --se cluster on the
   categorical column cl (13 clusters of uneven size) and on the numeric column cln naming the
   same clusters: the covariance against the direct computation to 1e-10 relative, the
   standard errors the square roots of its diagonal, clusters = 13, se_kind "cluster"; the two
   columns give the same covariance (the same partition; identity) to 1e-14. */
START_TEST (cluster_direct_check)
{
  for (int kind = 0; kind < 2; kind++) {
    rows *r = malloc (sizeof *r);
    sbuf csv = { 0 };
    job j = { 0 }, jn = { 0 };
    bl_fit_opts fo;
    double cov[9];
    int cl[400];
    const double *xc[2];
    const bl_fit *f, *fn;
    const bl_family *fam = kind == 0 ? &bl_family_poisson : &bl_family_gamma;
    ck_assert (r != NULL);
    sim_rows (r, kind, 260, 500u + (unsigned long) kind);
    rows_csv (r, 1, &csv);
    bl_fit_opts_init (&fo);
    fo.fam = fam;
    fo.link = &bl_link_log;
    fo.se = BL_SE_CLUSTER;
    fo.cluster_col = "cl";
    job_design (&j, &csv, "y", "x1,x2", kind ? "w" : NULL);
    f = job_fit (&j, &fo);
    fo.cluster_col = "cln";
    job_design (&jn, &csv, "y", "x1,x2", kind ? "w" : NULL);
    fn = job_fit (&jn, &fo);
    /* the used rows in table order, with their clusters renumbered by first appearance
       (any numbering gives the same sum) */
    {
      double *x1 = malloc (400 * sizeof *x1), *x2 = malloc (400 * sizeof *x2);
      int map[13];
      size_t m = 0, G = 0;
      for (size_t c = 0; c < 13; c++)
        map[c] = -1;
      for (size_t i = 0; i < r->n; i++) {
        if (isnan (r->x3[i]))
          continue;
        if (map[r->cl[i]] < 0)
          map[r->cl[i]] = (int) G++;
        cl[m] = map[r->cl[i]];
        x1[m] = r->x1[i];
        x2[m] = r->x2[i];
        m++;
      }
      ck_assert_msg (m == bl_fit_stats_get (f)->n && G == 13, "cluster: rows %zu G %zu", m, G);
      xc[0] = x1;
      xc[1] = x2;
      cluster_direct (f, xc, 3, cl, G, fam, cov);
      free (x1);
      free (x2);
    }
    ck_assert_msg (bl_fit_stats_get (f)->clusters == 13, "cluster %s: clusters %zu",
                   bl_family_name (fam), bl_fit_stats_get (f)->clusters);
    ck_assert_msg (strcmp (bl_fit_stats_get (f)->se_kind, "cluster") == 0,
                   "cluster %s: se_kind %s", bl_family_name (fam), bl_fit_stats_get (f)->se_kind);
    for (size_t q = 0; q < 9; q++) {
      ck_assert_msg (rel (bl_fit_cov (f)[q], cov[q]) <= 1e-10, "cluster %s cov[%zu]: %.17g, "
                     "direct %.17g", bl_family_name (fam), q, bl_fit_cov (f)[q], cov[q]);
      ck_assert_msg (rel (bl_fit_cov (fn)[q], bl_fit_cov (f)[q]) <= 1e-14,
                     "cluster %s numeric column cov[%zu]: %.17g, categorical %.17g",
                     bl_family_name (fam), q, bl_fit_cov (fn)[q], bl_fit_cov (f)[q]);
    }
    for (size_t q = 0; q < 3; q++)
      ck_assert_msg (rel (bl_fit_se (f)[q], sqrt (cov[q + 3 * q])) <= 1e-10,
                     "cluster %s se[%zu]", bl_family_name (fam), q);
    job_free (&j);
    job_free (&jn);
    free (csv.s);
    free (r);
  }
}
END_TEST

/* One observation per cluster: H_cc is the leverage h_i, so CR2 scales each row's score by
   (1 - h_i)^-1/2 and the cluster sandwich is HC2 (an identity of the two formulas; Bell &
   McCaffrey 2002, section 3; MacKinnon & White 1985, J. Econometrics 29, 305-325, for HC2),
   to 1e-10. */
START_TEST (cluster_one_per_cluster_is_hc2)
{
  for (int kind = 0; kind < 2; kind++) {
    rows *r = malloc (sizeof *r);
    sbuf csv = { 0 };
    job jc = { 0 }, jh = { 0 };
    bl_fit_opts fo;
    const bl_fit *fc, *fh;
    ck_assert (r != NULL);
    sim_rows (r, kind, 150, 900u + (unsigned long) kind);
    rows_csv (r, 0, &csv);
    bl_fit_opts_init (&fo);
    fo.fam = kind == 0 ? &bl_family_poisson : &bl_family_gamma;
    fo.link = &bl_link_log;
    fo.se = BL_SE_CLUSTER;
    fo.cluster_col = "id";
    job_design (&jc, &csv, "y", "x1,x2,x3", "w");
    fc = job_fit (&jc, &fo);
    fo.se = BL_SE_HC2;
    fo.cluster_col = NULL;
    job_design (&jh, &csv, "y", "x1,x2,x3", "w");
    fh = job_fit (&jh, &fo);
    ck_assert_msg (bl_fit_stats_get (fc)->clusters == bl_fit_stats_get (fc)->n,
                   "one per cluster: %zu clusters, %zu rows", bl_fit_stats_get (fc)->clusters,
                   bl_fit_stats_get (fc)->n);
    for (size_t q = 0; q < 16; q++)
      ck_assert_msg (rel (bl_fit_cov (fc)[q], bl_fit_cov (fh)[q]) <= 1e-10,
                     "one per cluster %s cov[%zu]: %.17g, hc2 %.17g", bl_family_name (fo.fam), q,
                     bl_fit_cov (fc)[q], bl_fit_cov (fh)[q]);
    job_free (&jc);
    job_free (&jh);
    free (csv.s);
    free (r);
  }
}
END_TEST

static void
expect_cluster_error (const char *csv, const char *col, int code, const char *where,
                      const char *frag, const char *name)
{
  sbuf b = { 0 };
  job j = { 0 };
  bl_fit_opts fo;
  bl_err err = { 0 };
  sb_printf (&b, "%s", csv);
  job_design (&j, &b, "y", "x1", NULL);
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_poisson;
  fo.se = BL_SE_CLUSTER;
  fo.cluster_col = col;
  j.f = bl_fit_new (j.d, &fo, &err);
  ck_assert_msg (j.f == NULL, "%s: the fit succeeded", name);
  ck_assert_msg (err.code == code, "%s: code %d, expected %d (%s)", name, err.code, code,
                 err.msg);
  ck_assert_msg (strcmp (err.where, where) == 0, "%s: where '%s', expected '%s'", name,
                 err.where, where);
  ck_assert_msg (strstr (err.msg, frag) != NULL, "%s: message '%s' lacks '%s'", name, err.msg,
                 frag);
  job_free (&j);
  free (b.s);
}

START_TEST (cluster_errors)
{
  static const char data[] =
    "y,x1,g,cl,cln\n3,0.1,p,a,1\n0,0.4,q,b,2\n5,0.35,p,a,1\n2,0.8,q,b,2\n7,0.93,p,a,1\n";
  static const char one[] =
    "y,x1,g,cl,cln\n3,0.1,p,a,4\n0,0.4,q,a,4\n5,0.35,p,a,4\n2,0.8,q,a,4\n7,0.93,p,a,4\n";
  static const char gap[] =
    "y,x1,g,cl,cln\n3,0.1,p,a,1\n0,0.4,q,b,2\n5,0.35,p,NA,1\n2,0.8,q,b,NA\n7,0.93,p,a,1\n";
  expect_cluster_error (data, NULL, BL_ESPEC, "--cluster", "need --cluster COL", "no column");
  expect_cluster_error (data, "zz", BL_ESPEC, "--cluster", "no column 'zz' in the data",
                        "missing column");
  expect_cluster_error (one, "cl", BL_EDATA, "--cluster", "'cl' has one cluster",
                        "one cluster");
  expect_cluster_error (one, "cln", BL_EDATA, "--cluster", "'cln' has one cluster",
                        "one numeric cluster");
  expect_cluster_error (gap, "cl", BL_EDATA, "sim.csv:4", "the cluster column 'cl' is missing",
                        "missing categorical cell");
  expect_cluster_error (gap, "cln", BL_EDATA, "sim.csv:5",
                        "the cluster column 'cln' is missing", "missing numeric cell");
}
END_TEST

/* ---------------------------------------------------------------- Brown-Forsythe */

static int
cmp_dbl (const void *pa, const void *pb)
{
  const double a = *(const double *) pa, b = *(const double *) pb;
  return (a > b) - (a < b);
}

/* Brown & Forsythe (1974, JASA 69, 364-367) computed directly: Pearson residuals
   r = (y - mu) sqrt(a / V(mu)) (diag.h), each group's median, z = |r - median|, the one-way
   ANOVA F of z on (G - 1, N - G) and its p from gsl_cdf_fdist_Q; against bl_brown_forsythe for
   a gamma fit with weights (where the spread differs by group by construction) and a poisson
   fit, to 1e-12 relative; the groups' n, median and mean |r - median| too. */
START_TEST (bf_direct)
{
  for (int kind = 0; kind < 2; kind++) {
    rows *r = malloc (sizeof *r);
    sbuf csv = { 0 };
    job j = { 0 };
    bl_fit_opts fo;
    bl_bf bf;
    bl_err err = { 0 };
    const bl_fit *f;
    const bl_family *fam = kind ? &bl_family_gamma : &bl_family_poisson;
    double med[4], spread[4], zbar = 0.0, between = 0.0, within = 0.0, F, pv;
    size_t cnt[4] = { 0, 0, 0, 0 }, n, m = 0;
    double *res[4];
    int *grp;
    ck_assert (r != NULL);
    sim_rows (r, kind, 240, 1200u + (unsigned long) kind);
    rows_csv (r, 1, &csv);
    bl_fit_opts_init (&fo);
    fo.fam = fam;
    fo.link = &bl_link_log;
    job_design (&j, &csv, "y", "x1,x2", kind ? "w" : NULL);
    f = job_fit (&j, &fo);
    n = bl_fit_stats_get (f)->n;
    grp = malloc (n * sizeof *grp);
    for (size_t k = 0; k < 4; k++)
      res[k] = malloc (n * sizeof *res[k]);
    for (size_t i = 0; i < r->n; i++)
      if (!isnan (r->x3[i]))
        grp[m++] = r->g[i];
    ck_assert (m == n);
    for (size_t i = 0; i < n; i++) {
      const double a = bl_fit_prior_w (f) ? bl_fit_prior_w (f)[i] : 1.0;
      const double mu = bl_fit_mu (f)[i];
      res[grp[i]][cnt[grp[i]]++] = (bl_fit_y (f)[i] - mu) * sqrt (a / bl_family_var (fam, mu,
                                                                                   0.0));
    }
    for (size_t k = 0; k < 4; k++) {
      const size_t c = cnt[k];
      double *s = malloc (c * sizeof *s);
      memcpy (s, res[k], c * sizeof *s);
      qsort (s, c, sizeof *s, cmp_dbl);
      med[k] = c % 2 ? s[c / 2] : 0.5 * (s[c / 2 - 1] + s[c / 2]);
      free (s);
      spread[k] = 0.0;
      for (size_t q = 0; q < c; q++) {
        res[k][q] = fabs (res[k][q] - med[k]);
        spread[k] += res[k][q];
      }
      zbar += spread[k];
      spread[k] /= (double) c;
    }
    zbar /= (double) n;
    for (size_t k = 0; k < 4; k++) {
      between += (double) cnt[k] * (spread[k] - zbar) * (spread[k] - zbar);
      for (size_t q = 0; q < cnt[k]; q++)
        within += (res[k][q] - spread[k]) * (res[k][q] - spread[k]);
    }
    F = (between / 3.0) / (within / (double) (n - 4));
    pv = gsl_cdf_fdist_Q (F, 3.0, (double) (n - 4));
    ck_assert_msg (bl_brown_forsythe (f, j.t, "g", &bf, &err) == BL_OK, "bf: %s: %s",
                   err.where, err.msg);
    ck_assert_msg (bf.dof == 3 && bf.dof2 == n - 4 && bf.ngroups == 4, "bf %s: dof %zu %zu "
                   "groups %zu", bl_family_name (fam), bf.dof, bf.dof2, bf.ngroups);
    ck_assert_msg (strcmp (bf.column, "g") == 0, "bf column '%s'", bf.column);
    ck_assert_msg (rel (bf.stat, F) <= 1e-12, "bf %s: F %.17g, direct %.17g", bl_family_name (fam),
                   bf.stat, F);
    ck_assert_msg (rel (bf.p, pv) <= 1e-10, "bf %s: p %.17g, direct %.17g", bl_family_name (fam),
                   bf.p, pv);
    for (size_t g = 0; g < bf.ngroups; g++) {
      const size_t k = (size_t) (strchr ("pqrs", bf.groups[g].level[0]) - "pqrs");
      ck_assert_msg (k < 4 && bf.groups[g].n == cnt[k], "bf %s group %s: n %zu",
                     bl_family_name (fam), bf.groups[g].level, bf.groups[g].n);
      ck_assert_msg (rel (bf.groups[g].median, med[k]) <= 1e-12
                     && rel (bf.groups[g].spread, spread[k]) <= 1e-12,
                     "bf %s group %s: median %.17g (%.17g) spread %.17g (%.17g)",
                     bl_family_name (fam),
                     bf.groups[g].level, bf.groups[g].median, med[k], bf.groups[g].spread,
                     spread[k]);
    }
    if (kind == 1)      /* gamma shape 3/(1+g): the spread differs by group */
      ck_assert_msg (bf.p < 1e-3, "bf gamma: p %g, the spreads differ by construction", bf.p);
    bl_bf_clear (&bf);
    bl_bf_clear (&bf);  /* twice: clear leaves nothing to free */
    for (size_t k = 0; k < 4; k++)
      free (res[k]);
    free (grp);
    job_free (&j);
    free (csv.s);
    free (r);
  }
}
END_TEST

static void
expect_bf_error (const char *csv, const char *col, int code, const char *where,
                 const char *frag, const char *name)
{
  sbuf b = { 0 };
  job j = { 0 };
  bl_fit_opts fo;
  bl_bf bf;
  bl_err err = { 0 };
  sb_printf (&b, "%s", csv);
  job_design (&j, &b, "y", "x1", NULL);
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_poisson;
  job_fit (&j, &fo);
  ck_assert_msg (bl_brown_forsythe (j.f, j.t, col, &bf, &err) == code, "%s: code %d (%s)",
                 name, err.code, err.msg);
  ck_assert_msg (err.code == code, "%s: err.code %d", name, err.code);
  ck_assert_msg (strcmp (err.where, where) == 0, "%s: where '%s', expected '%s'", name,
                 err.where, where);
  ck_assert_msg (strstr (err.msg, frag) != NULL, "%s: message '%s' lacks '%s'", name, err.msg,
                 frag);
  ck_assert_msg (bf.groups == NULL && bf.ngroups == 0, "%s: groups left after failure", name);
  job_free (&j);
  free (b.s);
}

START_TEST (bf_errors)
{
  static const char data[] =
    "y,x1,g,cl,cln\n3,0.1,p,a,1\n0,0.4,q,b,2\n5,0.35,p,a,1\n2,0.8,q,b,2\n7,0.93,p,a,1\n";
  static const char one[] =
    "y,x1,g,cl,cln\n3,0.1,p,a,1\n0,0.4,p,b,2\n5,0.35,p,a,1\n2,0.8,p,b,2\n7,0.93,p,a,1\n";
  static const char gap[] =
    "y,x1,g,cl,cln\n3,0.1,p,a,1\n0,0.4,q,b,2\n5,0.35,NA,a,1\n2,0.8,q,b,2\n7,0.93,p,a,1\n";
  expect_bf_error (data, "zz", BL_ESPEC, "--by", "no column 'zz' in sim.csv", "no column");
  expect_bf_error (data, "cln", BL_ESPEC, "--by", "'cln' is numeric", "numeric column");
  expect_bf_error (one, "g", BL_EDATA, "--by", "'g' has 1 level with rows", "one level");
  expect_bf_error (gap, "g", BL_EDATA, "sim.csv:4", "--by column 'g' is missing",
                   "missing level");
}
END_TEST

static Suite *
nested_suite (void)
{
  Suite *s = suite_create ("nested");
  TCase *ref = tcase_create ("reference");
  TCase *idt = tcase_create ("identities");
  TCase *err = tcase_create ("errors");
  tcase_add_test (ref, nested_poisson_chisq);
  tcase_add_test (ref, nested_tiny_p);
  tcase_add_test (ref, nested_gamma_f);
  tcase_add_test (ref, nested_poisson_pearson_f);
  tcase_add_test (ref, nested_negbin_lr);
  tcase_add_test (ref, cluster_direct_check);
  tcase_add_test (ref, bf_direct);
  tcase_add_test (idt, cluster_one_per_cluster_is_hc2);
  tcase_add_test (err, nested_errors);
  tcase_add_test (err, cluster_errors);
  tcase_add_test (err, bf_errors);
  tcase_set_timeout (ref, 300);
  tcase_set_timeout (idt, 300);
  tcase_set_timeout (err, 300);
  suite_add_tcase (s, ref);
  suite_add_tcase (s, idt);
  suite_add_tcase (s, err);
  return s;
}

int
main (void)
{
  SRunner *sr = srunner_create (nested_suite ());
  int nf;
  gsl_set_error_handler_off ();
  srunner_run_all (sr, CK_NORMAL);
  nf = srunner_ntests_failed (sr);
  srunner_free (sr);
  return nf == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
