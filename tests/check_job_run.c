/* check_job_run.c -- the job runner (job_run.h: bl_job_run, bl_job_plots_init,
   bl_job_resid_table).

   Every job runs on gamma data simulated here with GSL generators and fixed seeds, read
   through the public pipeline (bl_table_read_mem -> bl_terms_parse -> bl_design_new).  The
   checks, each with its source beside it:
   - identities: a fit job, a diagnose job and a compare job give, bit for bit, what calling
     the library functions directly gives (bl_fit_new, bl_nested_test, bl_diag_new,
     bl_compare_run), and their plot series are the direct calls' in the documented order
     of draws (job_run.h: the spread ratio's null first, then the quantile residuals from the
     same stream; the residual table from a fresh stream of the same seed);
   - errors: a failing model leaves no result and passes the library's code, where and
     message on; a failing later stage (the nested test, the checks, the spread by group)
     keeps the result with the stages before it; the N-th allocation fails for N = 1, 2, ...
     until the run succeeds (DEVELOPERS.md, "Tests"), each failure BL_ENOMEM, each success
     the same numbers as the run without injection. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include "alloc.h"
#include "compare.h"
#include "design.h"
#include "diag.h"
#include "fit.h"
#include "job.h"
#include "table.h"
#include "terms.h"
#include "testutil.h"

#define SEED 20261201UL

/* ---------------------------------------------------------------- helpers */

/* N rows "y,x,g,z" of gamma data, log mu = 0.7 + 0.9 x, shape 2.5, x uniform(0, 2), g a
   factor with levels "a", "b", "c" and no effect, z numeric noise; seed 2718.  With BAD a
   response of 0 in row 7 (outside gamma's support). */
static void
data (test_job *tj, size_t n, int bad)
{
  test_buf csv = { 0 };
  static const char *const cat[] = { "g" };
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  ck_assert_ptr_nonnull (r);
  gsl_rng_set (r, 2718);
  test_buf_printf (&csv, "y,x,g,z\n");
  for (size_t i = 0; i < n; i++) {
    const double x = 2.0 * gsl_rng_uniform (r), mu = exp (0.7 + 0.9 * x);
    const double y = gsl_ran_gamma (r, 2.5, mu / 2.5);
    test_buf_printf (&csv, "%.6g,%.6g,%c,%.6g\n", bad && i == 6 ? 0.0 : y, x,
                     "abc"[gsl_rng_uniform_int (r, 3)], gsl_rng_uniform (r));
  }
  gsl_rng_free (r);
  test_job_csv (tj, &csv, cat, 1, "y", "x, g", NULL, NULL);
  free (csv.s);
}

/* A finished job of response y: KEYS, VALUES pairs (NULL-terminated) set with bl_job_set. */
static void
job_make (bl_job *j, int single, const char *const *kv)
{
  bl_err err = { 0 };
  bl_job_init (j);
  ck_assert_int_eq (bl_job_set (j, "response", "y", "test", &err), BL_OK);
  for (size_t i = 0; kv && kv[i]; i += 2)
    ck_assert_msg (bl_job_set (j, kv[i], kv[i + 1], "test", &err) == BL_OK, "set %s: %s",
                   kv[i], err.msg);
  ck_assert_msg (bl_job_finish (j, single, NULL, &err) == BL_OK, "finish: %s", err.msg);
}

static void
same_doubles (const double *a, const double *b, size_t n, const char *what)
{
  for (size_t i = 0; i < n; i++)
    ck_assert_msg (memcmp (&a[i], &b[i], sizeof a[i]) == 0, "%s[%zu]: %.17g vs %.17g", what,
                   i, a[i], b[i]);
}

static void
same_double (double a, double b, const char *what)
{
  ck_assert_msg ((isnan (a) && isnan (b)) || memcmp (&a, &b, sizeof a) == 0,
                 "%s: %.17g vs %.17g", what, a, b);
}

static int
cmp_double (const void *pa, const void *pb)
{
  const double a = *(const double *) pa, b = *(const double *) pb;
  return (a > b) - (a < b);
}

/* The series of a single model, made here by the direct calls in job_run.h's order. */
static void
check_fit_series (const bl_job_plots *p, const bl_fit *f, unsigned long seed)
{
  const size_t n = bl_design_n (bl_fit_design (f));
  double *r = malloc (n * sizeof *r), *q = malloc (n * sizeof *q), d, pks;
  gsl_rng *rng = gsl_rng_alloc (gsl_rng_mt19937);
  bl_spread sp;
  bl_power pw;
  bl_err err = { 0 };
  ck_assert (r && q && rng);
  gsl_rng_set (rng, seed);
  bl_pearson_residuals (f, r);
  ck_assert_uint_eq (p->npanels, 1);
  ck_assert_ptr_eq (p->main, f);
  same_doubles (p->panel[0].pearson, r, n, "fit pearson");
  ck_assert_int_eq (bl_spread_compute (bl_fit_mu (f), r, n, rng, BL_DIAG_NULL_REPS, &sp,
                                       &err), BL_OK);
  ck_assert_uint_eq (p->spread.ngroups, sp.ngroups);
  same_double (p->spread.ratio, sp.ratio, "fit spread ratio");
  same_double (p->null95, sp.null95, "fit spread null95");
  ck_assert_int_eq (bl_quantile_residuals (f, rng, q, &err), BL_OK);
  qsort (q, n, sizeof *q, cmp_double);
  bl_ks_normal (q, n, &d, &pks);
  ck_assert_uint_eq (p->nq, n);
  same_doubles (p->qq, q, n, "fit quantile residuals");
  same_double (p->qq_p, pks, "fit KS p");
  ck_assert_int_eq (bl_variance_power (f, &pw, &err), BL_OK);
  ck_assert_ptr_eq (p->power_fit, f);
  same_double (p->power.estimate, pw.estimate, "fit variance power");
  same_doubles (p->power.log_var, pw.log_var, pw.groups_used, "fit log_var");
  bl_spread_clear (&sp);
  gsl_rng_free (rng);
  free (r);
  free (q);
}

/* ---------------------------------------------------------------- identities */

/* A fit job with the nested test against "x" and the plot series: the fit, the test and the
   series are the direct calls'; the residual table is bl_resid_table_new's with a fresh
   generator of the same seed. */
START_TEST (job_run_fit_same)
{
  static const char *const kv[] = { "family", "gamma", "link", "log", "terms", "x, g",
                                    "against", "x", NULL };
  test_job tj = { 0 };
  bl_job j;
  bl_job_run_opts ro;
  bl_job_result *res = NULL;
  bl_terms *small = test_terms_parse ("x", "--against");
  bl_design_opts dopt;
  bl_nested nd;
  bl_resid_table *t1, *t2;
  gsl_rng *rng = gsl_rng_alloc (gsl_rng_mt19937);
  bl_err err = { 0 };
  data (&tj, 300, 0);
  job_make (&j, 1, kv);
  {
    const bl_job_input in = { tj.t, tj.d, tj.off, small };
    bl_job_run_opts_init (&ro);
    ro.seed = 97531;
    ro.plots = 1;
    ck_assert_msg (bl_job_run (&j, &in, &ro, &res, &err) == BL_OK, "run: %s", err.msg);
  }
  test_job_fit (&tj, &j.fit, "direct fit");
  test_fit_same (bl_job_result_fit (res), tj.f, "fit job");
  ck_assert_ptr_eq (bl_job_result_model (res), bl_job_result_fit (res));
  ck_assert_ptr_null (bl_job_result_compare (res));
  ck_assert_ptr_null (bl_job_result_diag (res));
  bl_job_design_opts (&j, tj.off, &dopt);
  ck_assert_int_eq (bl_nested_test (tj.f, tj.t, small, &dopt, &j.fit, &nd, &err), BL_OK);
  ck_assert_ptr_nonnull (bl_job_result_nested (res));
  same_double (bl_job_result_nested (res)->stat, nd.stat, "nested stat");
  same_double (bl_job_result_nested (res)->p, nd.p, "nested p");
  check_fit_series (bl_job_result_plots (res), bl_job_result_fit (res), 97531);
  same_double (bl_job_result_spread_ratio (res), bl_job_result_plots (res)->spread.ratio,
               "spread ratio");
  t1 = bl_job_resid_table (res, NULL, &err);
  ck_assert_ptr_nonnull (t1);
  ck_assert_ptr_nonnull (rng);
  gsl_rng_set (rng, 97531);
  t2 = bl_resid_table_new (tj.f, rng, NULL, &err);
  ck_assert_ptr_nonnull (t2);
  same_doubles (t1->quantile, t2->quantile, t1->n, "resid quantile");
  same_doubles (t1->cooks, t2->cooks, t1->n, "resid cooks");
  bl_resid_table_free (t1);
  bl_resid_table_free (t2);
  gsl_rng_free (rng);
  bl_job_result_free (res);
  bl_terms_free (small);
  bl_job_clear (&j);
  test_job_free (&tj);
}
END_TEST

/* A diagnose job (OLS, the spread by g): the checks are bl_diag_new's with the same seed and
   the spread by group bl_brown_forsythe's. */
START_TEST (job_run_diagnose_same)
{
  static const char *const kv[] = { "method", "ols", NULL };
  test_job tj = { 0 };
  bl_job j;
  bl_job_run_opts ro;
  bl_job_result *res = NULL;
  bl_diag_opts dgo;
  bl_diag *dg;
  bl_bf bf;
  bl_err err = { 0 };
  data (&tj, 240, 0);
  job_make (&j, 1, kv);
  {
    const bl_job_input in = { tj.t, tj.d, tj.off, NULL };
    bl_job_run_opts_init (&ro);
    ro.task = BL_JOB_DIAGNOSE;
    ro.seed = 4242;
    ro.by = "g";
    ck_assert_msg (bl_job_run (&j, &in, &ro, &res, &err) == BL_OK, "run: %s", err.msg);
  }
  test_job_fit (&tj, &j.fit, "direct fit");
  test_fit_same (bl_job_result_fit (res), tj.f, "diagnose job");
  bl_diag_opts_init (&dgo);
  dgo.seed = 4242;
  dg = bl_diag_new (tj.f, &dgo, &err);
  ck_assert_ptr_nonnull (dg);
  ck_assert_ptr_nonnull (bl_job_result_diag (res));
  same_double (bl_diag_get (bl_job_result_diag (res))->spread.null95,
               bl_diag_get (dg)->spread.null95, "diag null95");
  same_double (bl_diag_get (bl_job_result_diag (res))->breusch_pagan.stat,
               bl_diag_get (dg)->breusch_pagan.stat, "diag breusch-pagan");
  same_double (bl_diag_get (bl_job_result_diag (res))->power.estimate,
               bl_diag_get (dg)->power.estimate, "diag power");
  ck_assert_int_eq (bl_brown_forsythe (tj.f, tj.t, "g", &bf, &err), BL_OK);
  ck_assert_ptr_nonnull (bl_job_result_by (res));
  same_double (bl_job_result_by (res)->stat, bf.stat, "by stat");
  ck_assert_ptr_null (bl_job_result_plots (res));
  ck_assert (isnan (bl_job_result_spread_ratio (res)));
  bl_bf_clear (&bf);
  bl_diag_free (dg);
  bl_job_result_free (res);
  bl_job_clear (&j);
  test_job_free (&tj);
}
END_TEST

/* A compare job: every candidate's figures are bl_compare_run's with the same options; the
   series are the winner's (its quantile residuals from a generator seeded with the seed)
   and a panel per fitted candidate in rank order. */
START_TEST (job_run_compare_same)
{
  static const char *const kv[] = { "candidates", "ls,ls-log,ls-bc,gam-log,ig-log",
                                    "folds", "3", NULL };
  test_job tj = { 0 };
  bl_job j;
  bl_job_run_opts ro;
  bl_job_result *res = NULL;
  bl_compare_opts co;
  bl_compare *c;
  const bl_compare *rc;
  const bl_job_plots *p;
  bl_err err = { 0 };
  long w;
  data (&tj, 200, 0);
  job_make (&j, 0, kv);
  {
    const bl_job_input in = { tj.t, tj.d, tj.off, NULL };
    bl_job_run_opts_init (&ro);
    ro.task = BL_JOB_COMPARE;
    ro.seed = 8642;
    ro.plots = 1;
    ck_assert_msg (bl_job_run (&j, &in, &ro, &res, &err) == BL_OK, "run: %s", err.msg);
  }
  bl_compare_opts_init (&co);
  co.candidates = j.candidates;
  co.folds = 3;
  co.seed = 8642;
  co.fit = j.fit;
  c = bl_compare_run (tj.d, &co, &err);
  ck_assert_ptr_nonnull (c);
  rc = bl_job_result_compare (res);
  ck_assert_ptr_nonnull (rc);
  ck_assert_ptr_null (bl_job_result_fit (res));
  ck_assert_uint_eq (bl_compare_count (rc), bl_compare_count (c));
  for (size_t i = 0; i < bl_compare_count (c); i++) {
    const bl_candidate *a = bl_compare_get (rc, i), *b = bl_compare_get (c, i);
    char what[64];
    ck_assert_str_eq (a->id, b->id);
    ck_assert_uint_eq (a->rank_position, b->rank_position);
    snprintf (what, sizeof what, "%s aic", a->id);
    same_double (a->aic, b->aic, what);
    snprintf (what, sizeof what, "%s cv_rmse", a->id);
    same_double (a->cv_rmse, b->cv_rmse, what);
    snprintf (what, sizeof what, "%s spread_ratio", a->id);
    same_double (a->spread_ratio, b->spread_ratio, what);
  }
  w = bl_compare_winner (c);
  ck_assert_int_ge (w, 0);
  ck_assert_int_eq (bl_compare_winner (rc), w);
  ck_assert_ptr_eq (bl_job_result_model (res), bl_compare_get (rc, (size_t) w)->fit);
  p = bl_job_result_plots (res);
  ck_assert_ptr_nonnull (p);
  ck_assert_ptr_eq (p->main, bl_compare_get (rc, (size_t) w)->fit);
  ck_assert_ptr_eq (p->panel[0].cand, bl_compare_get (rc, (size_t) w));
  for (size_t i = 1; i < p->npanels; i++)
    ck_assert_msg (!p->panel[i].cand->rank_position || (p->panel[i - 1].cand->rank_position
                   && p->panel[i].cand->rank_position > p->panel[i - 1].cand->rank_position),
                   "panel %zu out of rank order", i);
  {
    const bl_fit *wf = bl_compare_get (c, (size_t) w)->fit;
    const size_t n = bl_design_n (tj.d);
    double *q = malloc (n * sizeof *q);
    gsl_rng *rng = gsl_rng_alloc (gsl_rng_mt19937);
    ck_assert (q && rng);
    gsl_rng_set (rng, 8642);
    ck_assert_int_eq (bl_quantile_residuals (wf, rng, q, &err), BL_OK);
    qsort (q, n, sizeof *q, cmp_double);
    same_doubles (p->qq, q, n, "winner quantile residuals");
    same_double (p->qq_p, bl_compare_get (c, (size_t) w)->normality_p, "winner KS p");
    same_double (p->null95, bl_compare_get (c, (size_t) w)->spread_null95, "winner null95");
    gsl_rng_free (rng);
    free (q);
  }
  ck_assert_ptr_nonnull (p->profile);
  ck_assert_str_eq (p->profile->id, "ls-bc");
  ck_assert_ptr_eq (p->power_fit, bl_compare_get (rc, 0)->fit);    /* ls, first in order */
  bl_compare_free (c);
  bl_job_result_free (res);
  bl_job_clear (&j);
  test_job_free (&tj);
}
END_TEST

/* ---------------------------------------------------------------- errors */

/* The model fails (y = 0 under gamma): no result; code, where and message as bl_fit_new's. */
START_TEST (job_run_error_model)
{
  static const char *const kv[] = { "family", "gamma", NULL };
  test_job tj = { 0 };
  bl_job j;
  bl_job_run_opts ro;
  bl_job_result *res = (bl_job_result *) &ro;        /* set to NULL by the call */
  bl_err err = { 0 }, direct = { 0 };
  bl_fit *f;
  data (&tj, 120, 1);
  job_make (&j, 1, kv);
  f = bl_fit_new (tj.d, &j.fit, &direct);
  ck_assert_ptr_null (f);
  {
    const bl_job_input in = { tj.t, tj.d, tj.off, NULL };
    bl_job_run_opts_init (&ro);
    ro.plots = 1;
    ck_assert_int_eq (bl_job_run (&j, &in, &ro, &res, &err), direct.code);
  }
  ck_assert_ptr_null (res);
  ck_assert_int_eq (err.code, BL_EDATA);
  ck_assert_str_eq (err.where, direct.where);
  ck_assert_str_eq (err.msg, direct.msg);
  bl_job_clear (&j);
  test_job_free (&tj);
}
END_TEST

/* A later stage fails: the nested model is not nested (z is not in the model), the spread by
   group names a numeric column, the checks of a fit that did not converge.  The result keeps
   the fit; the error is the library's. */
START_TEST (job_run_error_stage)
{
  static const char *const kfit[] = { "family", "gamma", "link", "log", NULL };
  static const char *const kstuck[] = { "family", "gamma", "link", "log", "max-iter", "1",
                                        NULL };
  test_job tj = { 0 };
  bl_job j;
  bl_job_run_opts ro;
  bl_job_result *res = NULL;
  bl_terms *small = test_terms_parse ("z", "--against");
  bl_design_opts dopt;
  bl_nested nd;
  bl_err err = { 0 }, direct = { 0 };
  data (&tj, 150, 0);
  job_make (&j, 1, kfit);
  test_job_fit (&tj, &j.fit, "direct fit");
  bl_job_design_opts (&j, tj.off, &dopt);
  ck_assert_int_ne (bl_nested_test (tj.f, tj.t, small, &dopt, &j.fit, &nd, &direct), BL_OK);
  {
    const bl_job_input in = { tj.t, tj.d, tj.off, small };
    bl_job_run_opts_init (&ro);
    ro.plots = 1;
    ck_assert_int_eq (bl_job_run (&j, &in, &ro, &res, &err), direct.code);
  }
  ck_assert_ptr_nonnull (res);
  ck_assert_ptr_nonnull (bl_job_result_fit (res));
  ck_assert_ptr_null (bl_job_result_nested (res));
  ck_assert_ptr_null (bl_job_result_plots (res));        /* stages after it did not run */
  ck_assert_str_eq (err.where, direct.where);
  ck_assert_str_eq (err.msg, direct.msg);
  bl_job_result_free (res);
  /* --by on a numeric column */
  memset (&err, 0, sizeof err);
  {
    const bl_job_input in = { tj.t, tj.d, tj.off, NULL };
    bl_job_run_opts_init (&ro);
    ro.task = BL_JOB_DIAGNOSE;
    ro.by = "x";
    ck_assert_int_eq (bl_job_run (&j, &in, &ro, &res, &err), BL_ESPEC);
  }
  ck_assert_ptr_nonnull (res);
  ck_assert_ptr_nonnull (bl_job_result_diag (res));
  ck_assert_ptr_null (bl_job_result_by (res));
  ck_assert_str_eq (err.where, "--by");
  bl_job_result_free (res);
  bl_job_clear (&j);
  /* the checks of a fit that did not converge */
  job_make (&j, 1, kstuck);
  memset (&err, 0, sizeof err);
  {
    const bl_job_input in = { tj.t, tj.d, tj.off, NULL };
    bl_job_run_opts_init (&ro);
    ro.task = BL_JOB_DIAGNOSE;
    ck_assert_int_eq (bl_job_run (&j, &in, &ro, &res, &err), BL_ENOCONV);
  }
  ck_assert_ptr_nonnull (res);
  ck_assert (!bl_fit_stats_get (bl_job_result_fit (res))->converged);
  ck_assert_ptr_null (bl_job_result_diag (res));
  ck_assert_ptr_null (bl_job_result_model (res));
  ck_assert_ptr_null (bl_job_resid_table (res, NULL, &err));
  ck_assert_int_eq (err.code, BL_EINTERNAL);
  bl_job_result_free (res);
  bl_job_clear (&j);
  bl_terms_free (small);
  test_job_free (&tj);
}
END_TEST

/* The plot series refuse both a comparison and a fit, and stop once the cancel flag is set
   (BL_ECANCEL, where "report"); a stopped series holds nothing. */
START_TEST (job_run_error_plots)
{
  test_job tj = { 0 };
  bl_job_plots p;
  bl_err err = { 0 };
  volatile sig_atomic_t stop = 1;
  data (&tj, 100, 0);
  test_job_fit_glm (&tj, &bl_family_gamma, &bl_link_log, NULL);
  ck_assert_int_eq (bl_job_plots_init (&p, NULL, NULL, SEED, NULL, &err), BL_EINTERNAL);
  ck_assert_int_eq (bl_job_plots_init (&p, NULL, tj.f, SEED, &stop, &err), BL_ECANCEL);
  ck_assert_str_eq (err.where, "report");
  ck_assert_msg (strstr (err.msg, "cancelled"), "cancel: '%s'", err.msg);
  ck_assert_uint_eq (p.npanels, 0);
  ck_assert_ptr_null (p.qq);
  bl_job_plots_clear (&p);
  test_job_free (&tj);
}
END_TEST

/* The N-th allocation fails: a fit job with its nested test and plot series, and a compare
   job with its series; each failure BL_ENOMEM with no result, each success the reference's
   numbers. */
typedef struct nomem_ctx {
  const bl_job *job;
  bl_job_input in;
  bl_job_run_opts ro;
  bl_job_result *res, *ref;
} nomem_ctx;

static int
nomem_run (void *ctx, bl_err *err)
{
  nomem_ctx *c = ctx;
  return bl_job_run (c->job, &c->in, &c->ro, &c->res, err);
}

static void
nomem_after (void *ctx, int st, unsigned long n)
{
  nomem_ctx *c = ctx;
  char what[96];
  snprintf (what, sizeof what, "job_run nomem: allocation %lu", n);
  if (st == BL_OK) {
    const bl_job_plots *a = bl_job_result_plots (c->res), *b = bl_job_result_plots (c->ref);
    if (bl_job_result_fit (c->ref))
      test_fit_same (bl_job_result_fit (c->res), bl_job_result_fit (c->ref), what);
    else
      same_double (bl_compare_get (bl_job_result_compare (c->res), 0)->aic,
                   bl_compare_get (bl_job_result_compare (c->ref), 0)->aic, what);
    ck_assert_uint_eq (a->npanels, b->npanels);
    same_doubles (a->qq, b->qq, a->nq, what);
    same_double (a->null95, b->null95, what);
  }
  bl_job_result_free (c->res);
  c->res = NULL;
}

START_TEST (job_run_error_alloc_failure)
{
  static const char *const kfit[] = { "family", "gamma", "link", "log", NULL };
  static const char *const kcmp[] = { "candidates", "ls,gam-log", "folds", "0", NULL };
  test_job tj = { 0 };
  bl_terms *small = test_terms_parse ("x", "--against");
  bl_job jf, jc;
  bl_err err = { 0 };
  data (&tj, 120, 0);
  job_make (&jf, 1, kfit);
  job_make (&jc, 0, kcmp);
  for (int k = 0; k < 2; k++) {
    nomem_ctx c;
    unsigned long n;
    memset (&c, 0, sizeof c);
    c.job = k ? &jc : &jf;
    c.in.table = tj.t;
    c.in.design = tj.d;
    c.in.against = k ? NULL : small;
    bl_job_run_opts_init (&c.ro);
    c.ro.task = k ? BL_JOB_COMPARE : BL_JOB_FIT;
    c.ro.plots = 1;
    ck_assert_int_eq (bl_job_run (c.job, &c.in, &c.ro, &c.ref, &err), BL_OK);
    n = test_alloc_fail_loop (k ? "job_run nomem: compare" : "job_run nomem: fit", nomem_run,
                              nomem_after, &c, 100000, NULL);
    ck_assert_msg (n == 0 || n > 10, "job_run nomem %d: the loop ended at N = %lu", k, n);
    bl_job_result_free (c.ref);
  }
  bl_job_clear (&jf);
  bl_job_clear (&jc);
  bl_terms_free (small);
  test_job_free (&tj);
}
END_TEST

static Suite *
job_run_suite (void)
{
  Suite *s = suite_create ("job_run");
  TCase *idt = tcase_create ("identities");
  TCase *err = tcase_create ("errors");
  tcase_add_test (idt, job_run_fit_same);
  tcase_add_test (idt, job_run_diagnose_same);
  tcase_add_test (idt, job_run_compare_same);
  tcase_add_test (err, job_run_error_model);
  tcase_add_test (err, job_run_error_stage);
  tcase_add_test (err, job_run_error_plots);
  tcase_add_test (err, job_run_error_alloc_failure);
  tcase_set_timeout (idt, 120);
  tcase_set_timeout (err, 300);
  suite_add_tcase (s, idt);
  suite_add_tcase (s, err);
  return s;
}

int
main (void)
{
  return test_run_suite (job_run_suite (), 1);
}
