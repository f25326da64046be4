/* check_transform.c -- ordinary least squares of a transformed response (transform.c through
   fit.h): log, sqrt, Box-Cox with lambda fixed or estimated, the original-scale likelihood,
   and the back-transform with Duan's smearing.

   Every fit goes through the public pipeline: table -> terms -> design -> bl_fit_new.  The
   checks, each with its source beside it:
   - reference: scipy.stats.boxcox (lambda-hat and its 95% interval, intercept only) and a
     NumPy profile for a regression (tests/reference/remedies_mle.py, its output
     tests/reference/remedies_mle.txt; data tests/data/remedies.csv, invented);
   - identities: the log-likelihood on y's scale equals the normal log-likelihood of h(y)
     (computed here with GSL's gsl_multifit_linear) plus the log-Jacobian (Box & Cox 1964,
     J. R. Statist. Soc. B 26, 211-252); AIC = -2 l + 2 k with k = rank + 1 (+1 for an
     estimated lambda); the lognormal mean exp(mu + sigma^2/2) against smearing;
   - errors: every refusal of the transform engine, and out of memory at every allocation of
     a fit and of a smeared prediction;
   - basics: names, the shift undone by the back-transform. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_multifit.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_vector.h>
#include "design.h"
#include "fit.h"
#include "model.h"
#include "table.h"
#include "terms.h"
#include "testutil.h"

/* ---------------------------------------------------------------- helpers */

/* OLS of a transform: TR, lambda L (estimated when EST). */
static void
tr_opts (bl_fit_opts *fo, bl_transform tr, double L, int est)
{
  bl_fit_opts_init (fo);
  fo->method = BL_METHOD_OLS;
  fo->transform = tr;
  fo->lambda = L;
  fo->lambda_est = est;
}

/* Compare the Box-Cox estimate of F with case CAS of remedies_mle.txt: lambda to 1e-6, the
   interval ends to 1e-4 (both open, NAN, when the reference's are), the practical power
   exactly and never -0 (NAN when the reference has none), the log-likelihood at lambda-hat to 1e-8
   relative. */
static void
check_boxcox_ref (const bl_fit *f, const char *cas)
{
  const bl_fit_transform_info *t = bl_fit_transform (f);
  const double rl = test_remedies_ref1 (cas, "lambda");
  const double rlo = test_remedies_ref1 (cas, "lambda_lo");
  const double rhi = test_remedies_ref1 (cas, "lambda_hi");
  const double rp = test_remedies_ref1 (cas, "lambda_practical");
  const double rll = test_remedies_ref1 (cas, "loglik"), ll = bl_fit_stats_get (f)->loglik;
  fprintf (stderr, "boxcox %s: lambda %.10f (ref %.10f, diff %.2e), lo %.8f (ref %.8f, diff "
           "%.2e), hi %.8f (ref %.8f, diff %.2e), practical %g (ref %g), loglik rel %.2e\n",
           cas, t->lambda, rl, t->lambda - rl, t->lambda_lo, rlo, t->lambda_lo - rlo,
           t->lambda_hi, rhi, t->lambda_hi - rhi, t->lambda_practical, rp, test_rel (ll, rll));
  ck_assert_int_eq (t->lambda_estimated, 1);
  ck_assert_msg (fabs (t->lambda - rl) <= 1e-6, "%s lambda %.17g, ref %.17g", cas, t->lambda,
                 rl);
  if (isnan (rlo))
    ck_assert_msg (isnan (t->lambda_lo), "%s lambda_lo %.17g, ref open", cas, t->lambda_lo);
  else
    ck_assert_msg (fabs (t->lambda_lo - rlo) <= 1e-4, "%s lambda_lo %.17g, ref %.17g", cas,
                   t->lambda_lo, rlo);
  if (isnan (rhi))
    ck_assert_msg (isnan (t->lambda_hi), "%s lambda_hi %.17g, ref open", cas, t->lambda_hi);
  else
    ck_assert_msg (fabs (t->lambda_hi - rhi) <= 1e-4, "%s lambda_hi %.17g, ref %.17g", cas,
                   t->lambda_hi, rhi);
  if (isnan (rp))
    ck_assert_msg (isnan (t->lambda_practical), "%s practical %g, ref none", cas,
                   t->lambda_practical);
  else
    ck_assert_msg (t->lambda_practical == rp && !signbit (t->lambda_practical),
                   "%s practical %g, ref %g", cas, t->lambda_practical, rp);
  ck_assert_msg (test_rel (ll, rll) <= 1e-8, "%s loglik %.17g, ref %.17g", cas, ll, rll);
}


/* ---------------------------------------------------------------- boxcox_scale.txt */

/* One case of tests/reference/boxcox_scale.txt (boxcox_scale.py: the profile in 60-digit
   arithmetic by mpmath): the data, the intercept flag, its "at L loglik b..." lines and its
   keyed values (lambda, lambda_lo, lambda_hi, loglik). */
#define BCS_MAX_N 64
#define BCS_MAX_AT 16
typedef struct bcs_case {
  int intercept;
  size_t n, nat, nb[BCS_MAX_AT];
  double x[BCS_MAX_N], y[BCS_MAX_N];
  double at[BCS_MAX_AT][4];      /* L, loglik, b0, b1 */
  double lambda, lambda_lo, lambda_hi, loglik;
} bcs_case;

static size_t
bcs_nums (const char *s, double *v, size_t cap)
{
  size_t k = 0;
  char *e;
  while (k < cap) {
    const double x = strtod (s, &e);
    if (e == s)
      break;
    v[k++] = x;
    s = e;
  }
  return k;
}

static void
bcs_read (const char *cas, bcs_case *c)
{
  char path[1024];
  static char line[8192];
  FILE *fp = fopen (test_data_path ("../reference/boxcox_scale.txt", path, sizeof path), "r");
  int in = 0, found = 0;
  memset (c, 0, sizeof *c);
  c->lambda = c->lambda_lo = c->lambda_hi = c->loglik = NAN;
  ck_assert_msg (fp != NULL, "open %s", path);
  while (fgets (line, sizeof line, fp)) {
    line[strcspn (line, "\n")] = '\0';
    if (strncmp (line, "case ", 5) == 0) {
      in = strcmp (line + 5, cas) == 0;
      found |= in;
    } else if (!in) {
      continue;
    } else if (strncmp (line, "intercept ", 10) == 0) {
      c->intercept = atoi (line + 10);
    } else if (strncmp (line, "x ", 2) == 0) {
      c->n = bcs_nums (line + 2, c->x, BCS_MAX_N);
    } else if (strncmp (line, "y ", 2) == 0) {
      ck_assert_uint_eq (bcs_nums (line + 2, c->y, BCS_MAX_N), c->n);
    } else if (strncmp (line, "at ", 3) == 0 && c->nat < BCS_MAX_AT) {
      c->nb[c->nat] = bcs_nums (line + 3, c->at[c->nat], 4) - 2;
      c->nat++;
    } else if (strncmp (line, "lambda ", 7) == 0) {
      c->lambda = strtod (line + 7, NULL);
    } else if (strncmp (line, "lambda_lo ", 10) == 0) {
      c->lambda_lo = strtod (line + 10, NULL);
    } else if (strncmp (line, "lambda_hi ", 10) == 0) {
      c->lambda_hi = strtod (line + 10, NULL);
    } else if (strncmp (line, "loglik ", 7) == 0) {
      c->loglik = strtod (line + 7, NULL);
    }
  }
  fclose (fp);
  ck_assert_msg (found && c->n > 0, "boxcox_scale.txt: no case '%s'", cas);
}

/* The design of y on x (with or without an intercept) over case C's data. */
static void
bcs_design (test_job *j, const bcs_case *c)
{
  test_buf b = { 0 };
  test_design_spec ds = { NULL, NULL, NULL, !c->intercept };
  test_buf_printf (&b, "y,x\n");
  for (size_t i = 0; i < c->n; i++)
    test_buf_printf (&b, "%.17g,%.17g\n", c->y[i], c->x[i]);
  j->t = test_table_mem (b.s, b.len, "scale.csv", NULL, 0);
  free (b.s);
  test_job_design_spec (j, "y", "x", &ds);
}

/* ---------------------------------------------------------------- reference */

/* scipy.stats.boxcox(flow, alpha=0.05) (lambda-hat by boxcox_normmax, method 'mle', and the
   interval where the profile is within chi2_1(0.95)/2 of its top), intercept only, on
   tests/data/remedies.csv (remedies_mle.txt, case boxcox_flow): the interval
   [0.108, 0.322] holds no multiple of 0.5, so there is no practical power. */
START_TEST (transform_boxcox_scipy)
{
  test_job j = { 0 };
  bl_fit_opts fo;
  j.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j, "flow", NULL, NULL);
  tr_opts (&fo, BL_TRANSFORM_BOXCOX, 1.0, 1);
  test_job_fit (&j, &fo, "boxcox flow");
  check_boxcox_ref (j.f, "boxcox_flow");
  test_job_free (&j);
}
END_TEST

/* The NumPy profile of remedies_mle.py (case boxcox_reg): hours on (1, load),
   l(L) = -n/2 (log(2 pi RSS(L)/n) + 1) + (L - 1) sum log y, maximized by
   scipy.optimize.minimize_scalar (bounded), interval ends by brentq; the practical power 0 is
   the multiple of 0.5 inside [-0.162, 0.629] nearest lambda-hat = 0.232. */
START_TEST (transform_boxcox_profile)
{
  test_job j = { 0 };
  bl_fit_opts fo;
  j.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j, "hours", "load", NULL);
  tr_opts (&fo, BL_TRANSFORM_BOXCOX, 1.0, 1);
  test_job_fit (&j, &fo, "boxcox hours");
  check_boxcox_ref (j.f, "boxcox_reg");
  ck_assert_uint_eq (bl_fit_transform (j.f)->nprofile, 61);
  test_job_free (&j);
}
END_TEST

/* Four values (remedies_mle.py OPEN_Y, case boxcox_open): the profile never falls 1.92 below
   its top inside [-3, 3] (the script asserts it: the drops at -3 and 3 are 0.75 and 0.51), so
   both interval ends are open (NAN) and the practical power is the multiple of 0.5 nearest
   lambda-hat in all of [-3, 3]. */
START_TEST (transform_boxcox_open)
{
  static const char csv[] = "y\n2.385\n3.71\n2.94\n4.417\n";
  test_job j = { 0 };
  bl_fit_opts fo;
  j.t = test_table_mem (csv, strlen (csv), "open.csv", NULL, 0);
  test_job_design_spec (&j, "y", NULL, NULL);
  tr_opts (&fo, BL_TRANSFORM_BOXCOX, 1.0, 1);
  test_job_fit (&j, &fo, "boxcox open");
  check_boxcox_ref (j.f, "boxcox_open");
  test_job_free (&j);
}
END_TEST


/* The profile across scales and powers against its direct evaluation in 60 digits
   (boxcox_scale.txt): y = S exp(0.4 x + 0.15 e) for S = 1e-3, 1, 1e3, 1e6 and L = -3, -2.5,
   ..., 3, with an intercept and (S = 1e-3, 1e6) without.  At S = 1e6, L = -3 the response is
   1/3 + 1e-18 terms, a constant to a double; at S = 1e-3, L = 3 it is -1/3 + 1e-9 terms.
   Each fixed-L fit: the original-scale log-likelihood to 1e-10 relative, every coefficient of
   (y^L - 1) / L to 1e-8 relative (the slope is near 1e-18 at the extremes), the fit not
   perfect; and the estimated fit's profile points at those powers to 1e-10 relative. */
START_TEST (transform_boxcox_scales)
{
  static const char *const cases[] = { "scale_0.001", "scale_1", "scale_1000", "scale_1e+06",
                                       "noint_0.001", "noint_1e+06" };
  double worst_ll = 0.0, worst_b = 0.0;
  for (size_t ci = 0; ci < sizeof cases / sizeof cases[0]; ci++) {
    bcs_case c;
    bcs_read (cases[ci], &c);
    ck_assert_uint_eq (c.nat, 13);
    for (size_t k = 0; k < c.nat; k++) {
      test_job j = { 0 };
      bl_fit_opts fo;
      char what[96];
      const bl_fit_stats *st;
      bcs_design (&j, &c);
      tr_opts (&fo, BL_TRANSFORM_BOXCOX, c.at[k][0], 0);
      snprintf (what, sizeof what, "%s at %g", cases[ci], c.at[k][0]);
      test_job_fit (&j, &fo, what);
      st = bl_fit_stats_get (j.f);
      ck_assert_msg (!st->perfect && isfinite (st->loglik), "%s: perfect %d, loglik %g", what,
                     st->perfect, st->loglik);
      ck_assert_msg (test_rel (st->loglik, c.at[k][1]) <= 1e-10, "%s: loglik %.17g, ref %.17g",
                     what, st->loglik, c.at[k][1]);
      if (test_rel (st->loglik, c.at[k][1]) > worst_ll)
        worst_ll = test_rel (st->loglik, c.at[k][1]);
      ck_assert_uint_eq (c.nb[k], bl_fit_p (j.f));
      for (size_t b = 0; b < c.nb[k]; b++) {
        const double r = test_rel (bl_fit_beta (j.f)[b], c.at[k][2 + b]);
        ck_assert_msg (r <= 1e-8, "%s: b%zu %.17g, ref %.17g", what, b, bl_fit_beta (j.f)[b],
                       c.at[k][2 + b]);
        if (r > worst_b)
          worst_b = r;
      }
      test_job_free (&j);
    }
    /* the estimated fit's profile (the cancellation-free RSS of each power) at the same
       powers: grid points 0, 5, ..., 60 of the scan every 0.1 */
    {
      test_job j = { 0 };
      bl_fit_opts fo;
      const bl_fit_transform_info *t;
      bcs_design (&j, &c);
      tr_opts (&fo, BL_TRANSFORM_BOXCOX, 1.0, 1);
      test_job_fit (&j, &fo, cases[ci]);
      t = bl_fit_transform (j.f);
      ck_assert_uint_eq (t->nprofile, 61);
      for (size_t k = 0; k < c.nat; k++) {
        const double r = test_rel (t->profile_loglik[5 * k], c.at[k][1]);
        ck_assert_msg (fabs (t->profile_lambda[5 * k] - c.at[k][0]) < 1e-12 && r <= 1e-10,
                       "%s profile at %g: %.17g, ref %.17g", cases[ci],
                       t->profile_lambda[5 * k], t->profile_loglik[5 * k], c.at[k][1]);
        if (r > worst_ll)
          worst_ll = r;
      }
      test_job_free (&j);
    }
  }
  fprintf (stderr, "boxcox scales: worst loglik rel %.2e, worst coefficient rel %.2e\n",
           worst_ll, worst_b);
}
END_TEST

/* The example of issue 13 (boxcox_scale.txt, case issue): y near 2e4 from a true power -2.7,
   where (y^L - 1) / L in doubles keeps 4 digits of its spread.  lambda-hat to 1e-6, the 95%
   interval ends to 1e-5 and the log-likelihood at the maximum to 1e-10 relative against the
   60-digit profile; every profile point has a likelihood; no edge. */
START_TEST (transform_boxcox_issue)
{
  bcs_case c;
  test_job j = { 0 };
  bl_fit_opts fo;
  const bl_fit_transform_info *t;
  bcs_read ("issue", &c);
  bcs_design (&j, &c);
  tr_opts (&fo, BL_TRANSFORM_BOXCOX, 1.0, 1);
  test_job_fit (&j, &fo, "issue");
  t = bl_fit_transform (j.f);
  fprintf (stderr, "boxcox issue: lambda %.10f (ref %.10f), lo %.8f (ref %.8f), hi %.8f "
           "(ref %.8f), loglik rel %.2e, digits kept %d\n", t->lambda, c.lambda, t->lambda_lo,
           c.lambda_lo, t->lambda_hi, c.lambda_hi, test_rel (bl_fit_stats_get (j.f)->loglik,
                                                             c.loglik), t->digits_kept);
  ck_assert_msg (fabs (t->lambda - c.lambda) <= 1e-6, "lambda %.17g, ref %.17g", t->lambda,
                 c.lambda);
  ck_assert_msg (fabs (t->lambda_lo - c.lambda_lo) <= 1e-5, "lo %.17g, ref %.17g",
                 t->lambda_lo, c.lambda_lo);
  ck_assert_msg (fabs (t->lambda_hi - c.lambda_hi) <= 1e-5, "hi %.17g, ref %.17g",
                 t->lambda_hi, c.lambda_hi);
  ck_assert_msg (test_rel (bl_fit_stats_get (j.f)->loglik, c.loglik) <= 1e-10,
                 "loglik %.17g, ref %.17g", bl_fit_stats_get (j.f)->loglik, c.loglik);
  ck_assert_int_eq (t->lambda_edge, 0);
  ck_assert_str_eq (t->profile_why, "");
  for (size_t k = 0; k < t->nprofile; k++)
    ck_assert_msg (isfinite (t->profile_loglik[k]), "profile point %zu (lambda %g) null", k,
                   t->profile_lambda[k]);
  /* the residuals as differences of doubles near 0.37 keep few digits: said in a note */
  ck_assert_int_lt (t->digits_kept, BL_BOXCOX_DIGITS);
  ck_assert (test_fit_has_warning (j.f, "significant digits"));
  test_job_free (&j);
}
END_TEST

/* A profile rising to the end of the range: y = (1 + 2.5 x + e)^(-1/3.5), so y^-3.5 is
   linear in x up to a small e (a closed form, no source needed): the true power -3.5 lies
   beyond [-3, 3], the profile is highest at -3; lambda_edge says which end, with a note and
   the open lower end's reason (issue 13, class 3: say so when the maximum is on the range's
   edge). */
START_TEST (transform_boxcox_edge)
{
  test_buf b = { 0 };
  test_job j = { 0 };
  bl_fit_opts fo;
  const bl_fit_transform_info *t;
  test_buf_printf (&b, "y,x\n");
  for (int i = 0; i < 30; i++) {
    const double x = 0.05 + 0.031 * i, e = 0.002 * sin (1.7 * i + 0.3);
    test_buf_printf (&b, "%.17g,%.17g\n", pow (1.0 + 2.5 * x + e, -1.0 / 3.5), x);
  }
  j.t = test_table_mem (b.s, b.len, "edge.csv", NULL, 0);
  free (b.s);
  test_job_design_spec (&j, "y", "x", NULL);
  tr_opts (&fo, BL_TRANSFORM_BOXCOX, 1.0, 1);
  test_job_fit (&j, &fo, "edge");
  t = bl_fit_transform (j.f);
  fprintf (stderr, "boxcox edge: lambda %g, edge %d, lo %g (%s)\n", t->lambda, t->lambda_edge,
           t->lambda_lo, t->lambda_lo_why);
  ck_assert_int_eq (t->lambda_edge, -1);
  ck_assert (t->lambda == BL_BOXCOX_MIN);
  ck_assert (isnan (t->lambda_lo));
  ck_assert (strstr (t->lambda_lo_why, "lower end") != NULL);
  ck_assert (test_fit_has_warning (j.f, "lower end of its search range"));
  test_job_free (&j);
}
END_TEST

/* ---------------------------------------------------------------- identities */

/* The original-scale log-likelihood (Box & Cox 1964, section 3): the normal log-likelihood of
   z = h(y) at the OLS fit, l_z = -n/2 (log(2 pi RSS/n) + 1), RSS from GSL's
   gsl_multifit_linear, plus the log-Jacobian: log -sum log y; sqrt sum (-log 2 - 0.5 log y);
   Box-Cox (L - 1) sum log y.  loglik_transformed is l_z.  AIC = -2 l + 2 k with
   k = rank + 1, plus 1 when lambda is estimated (Akaike 1974).  All to 1e-10 relative, on
   tests/data/remedies.csv, hours on (1, load). */
START_TEST (transform_loglik_jacobian)
{
  static const struct { bl_transform tr; double L; int est; const char *name; } cs[] = {
    { BL_TRANSFORM_LOG, NAN, 0, "log" }, { BL_TRANSFORM_SQRT, NAN, 0, "sqrt" },
    { BL_TRANSFORM_BOXCOX, 0.37, 0, "boxcox" }, { BL_TRANSFORM_BOXCOX, -0.6, 0, "boxcox" },
    { BL_TRANSFORM_BOXCOX, 1.0, 1, "boxcox" }
  };
  for (size_t c = 0; c < sizeof cs / sizeof cs[0]; c++) {
    test_job j = { 0 };
    bl_fit_opts fo;
    const bl_fit_stats *st;
    const double *y, *x;
    size_t n;
    gsl_matrix *X, *C;
    gsl_vector *z, *b;
    gsl_multifit_linear_workspace *ws;
    double rss, L, lz, jac, l;
    long double sl = 0.0L;
    j.t = test_table_file ("remedies.csv", NULL, 0);
    test_job_design_spec (&j, "hours", "load", NULL);
    tr_opts (&fo, cs[c].tr, cs[c].L, cs[c].est);
    test_job_fit (&j, &fo, cs[c].name);
    st = bl_fit_stats_get (j.f);
    L = bl_fit_transform (j.f)->lambda;
    n = bl_table_nrows (j.t);
    y = test_table_col (j.t, "hours");
    x = test_table_col (j.t, "load");
    X = gsl_matrix_alloc (n, 2);
    C = gsl_matrix_alloc (2, 2);
    z = gsl_vector_alloc (n);
    b = gsl_vector_alloc (2);
    ws = gsl_multifit_linear_alloc (n, 2);
    ck_assert_msg (X && C && z && b && ws, "%s: out of memory", cs[c].name);
    for (size_t i = 0; i < n; i++) {
      double zi;
      gsl_matrix_set (X, i, 0, 1.0);
      gsl_matrix_set (X, i, 1, x[i]);
      switch (cs[c].tr) {
      case BL_TRANSFORM_LOG: zi = log (y[i]); break;
      case BL_TRANSFORM_SQRT: zi = sqrt (y[i]); break;
      default: zi = (pow (y[i], L) - 1.0) / L; break;
      }
      gsl_vector_set (z, i, zi);
      sl += log (y[i]);
    }
    ck_assert_int_eq (gsl_multifit_linear (X, z, b, C, &rss, ws), GSL_SUCCESS);
    lz = -0.5 * (double) n * (log (2.0 * M_PI * rss / (double) n) + 1.0);
    switch (cs[c].tr) {
    case BL_TRANSFORM_LOG: jac = -(double) sl; break;
    case BL_TRANSFORM_SQRT: jac = -(double) n * log (2.0) - 0.5 * (double) sl; break;
    default: jac = (L - 1.0) * (double) sl; break;
    }
    l = lz + jac;
    fprintf (stderr, "transform %s%s L=%g: loglik rel %.2e, loglik_transformed rel %.2e\n",
             cs[c].name, cs[c].est ? " (est)" : "", L, test_rel (st->loglik, l),
             test_rel (st->loglik_transformed, lz));
    ck_assert_msg (test_rel (st->loglik_transformed, lz) <= 1e-10, "%s L=%g loglik_transformed "
                   "%.17g, direct %.17g", cs[c].name, L, st->loglik_transformed, lz);
    ck_assert_msg (test_rel (st->loglik, l) <= 1e-10, "%s L=%g loglik %.17g, direct %.17g",
                   cs[c].name, L, st->loglik, l);
    ck_assert_msg (st->k == st->rank + 1 + (cs[c].est ? 1u : 0u), "%s: k %zu, rank %zu",
                   cs[c].name, st->k, st->rank);
    ck_assert_msg (test_rel (st->aic, -2.0 * l + 2.0 * (double) st->k) <= 1e-12, "%s: aic %.17g",
                   cs[c].name, st->aic);
    ck_assert_msg (test_rel (st->bic, -2.0 * l + (double) st->k * log ((double) n)) <= 1e-12,
                   "%s: bic %.17g", cs[c].name, st->bic);
    for (size_t k = 0; k < 2; k++) {
      const double bk = bl_fit_beta (j.f)[test_design_col (j.d, k ? "load" : "intercept")];
      ck_assert_msg (test_rel (bk, gsl_vector_get (b, k)) <= 1e-10, "%s: b%zu %.17g, gsl %.17g",
                     cs[c].name, k, bk, gsl_vector_get (b, k));
    }
    ck_assert_str_eq (bl_fit_transform (j.f)->name, cs[c].name);
    if (cs[c].tr != BL_TRANSFORM_BOXCOX)
      ck_assert_msg (isnan (L), "%s: lambda %g", cs[c].name, L);
    gsl_multifit_linear_free (ws);
    gsl_vector_free (b);
    gsl_vector_free (z);
    gsl_matrix_free (C);
    gsl_matrix_free (X);
    test_job_free (&j);
  }
}
END_TEST

/* Smearing (Duan 1983, JASA 78, 605-610): lognormal y = exp(mu + e), e ~ N(0, 1), n = 100000
   simulated with GSL (gsl_rng_mt19937, seed 20261217; gsl_ran_gaussian), log transform,
   intercept only.  The mean of y is exp(mu + sigma^2/2) (lognormal mean, common practice, no
   source); the smeared back-transform at beta0 estimates it to within 1% (its relative
   standard error is sqrt(e - 1)/sqrt(n) = 0.4%); the naive exp(beta0) estimates the median
   exp(mu), 1 - exp(-1/2) = 39.3% low, so within 35-43% low. */
START_TEST (transform_smearing_lognormal)
{
  const size_t n = 100000;
  const double mu = 1.3;
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  test_buf c = { 0 };
  test_job j = { 0 };
  bl_fit_opts fo;
  double b0, sm, nv, truth = exp (mu + 0.5);
  ck_assert_msg (r != NULL, "smearing: no rng");
  gsl_rng_set (r, 20261217);
  test_buf_printf (&c, "y\n");
  for (size_t i = 0; i < n; i++)
    test_buf_printf (&c, "%.17g\n", exp (mu + gsl_ran_gaussian (r, 1.0)));
  gsl_rng_free (r);
  j.t = test_table_mem (c.s, c.len, "lognormal.csv", NULL, 0);
  test_job_design_spec (&j, "y", NULL, NULL);
  tr_opts (&fo, BL_TRANSFORM_LOG, NAN, 0);
  test_job_fit (&j, &fo, "smearing");
  b0 = bl_fit_beta (j.f)[0];
  sm = bl_fit_backtransform (j.f, b0, 1);
  nv = bl_fit_backtransform (j.f, b0, 0);
  fprintf (stderr, "smearing: smeared %.5f, naive %.5f, true mean %.5f: smeared %+.3f%%, "
           "naive %+.2f%%\n", sm, nv, truth, 100.0 * (sm / truth - 1.0),
           100.0 * (nv / truth - 1.0));
  ck_assert_msg (fabs (sm / truth - 1.0) <= 0.01, "smeared mean %.6f, true %.6f", sm, truth);
  ck_assert_msg (1.0 - nv / truth >= 0.35 && 1.0 - nv / truth <= 0.43,
                 "naive mean %.6f is %.1f%% low, expected 35-43%%", nv,
                 100.0 * (1.0 - nv / truth));
  ck_assert_msg (test_rel (nv, exp (b0)) <= 1e-15, "naive %.17g, exp(b0) %.17g", nv, exp (b0));
  test_job_free (&j);
  free (c.s);
}
END_TEST

/* ---------------------------------------------------------------- errors */

/* y <= 0 for log, sqrt and Box-Cox (transform.c): BL_EDATA, where = FILE:LINE of the first
   such row, the message counts them and says "y > 0"; --shift C makes the same data work,
   with a warning that results depend on the shift; a shift too small is refused with
   "y + shift > 0". */
START_TEST (transform_error_nonpositive)
{
  static const char csv[] = "y,x\n3.1,1.2\n4.4,2.3\n0,2.9\n5.9,3.1\n-2,3.8\n7.3,4.6\n";
  static const struct { bl_transform tr; int est; const char *name; } cs[] = {
    { BL_TRANSFORM_LOG, 0, "log" }, { BL_TRANSFORM_SQRT, 0, "sqrt" },
    { BL_TRANSFORM_BOXCOX, 1, "boxcox" }, { BL_TRANSFORM_BOXCOX, 0, "boxcox" }
  };
  for (size_t c = 0; c < sizeof cs / sizeof cs[0]; c++) {
    test_job j = { 0 };
    bl_fit_opts fo;
    bl_err err = { 0 };
    bl_fit *f;
    char what[64];
    snprintf (what, sizeof what, "%s%s y <= 0", cs[c].name, cs[c].est ? " est" : "");
    j.t = test_table_mem (csv, strlen (csv), "neg.csv", NULL, 0);
    test_job_design_spec (&j, "y", "x", NULL);
    tr_opts (&fo, cs[c].tr, 0.5, cs[c].est);
    f = bl_fit_new (j.d, &fo, &err);
    test_expect_fail (f, &err, BL_EDATA, "neg.csv:4", "y > 0", "2 values", what);
    ck_assert_str_eq (err.where, "neg.csv:4");
    ck_assert_msg (strstr (err.msg, cs[c].name) && strstr (err.msg, "--shift"),
                   "%s: msg '%s'", what, err.msg);
    /* shift 2.5: every y + 2.5 > 0 */
    fo.shift_given = 1;
    fo.shift = 2.5;
    j.f = bl_fit_new (j.d, &fo, &err);
    ck_assert_msg (j.f != NULL, "%s shifted: %s", what, err.msg);
    ck_assert_msg (test_fit_has_warning (j.f, "depends on that choice"),
                   "%s shifted: no warning", what);
    ck_assert_msg (bl_fit_transform (j.f)->shift == 2.5 && bl_fit_transform (j.f)->shift_given,
                   "%s shifted: shift not recorded", what);
    bl_fit_free (j.f);
    j.f = NULL;
    /* shift 2: -2 + 2 = 0 is still not > 0 */
    fo.shift = 2.0;
    f = bl_fit_new (j.d, &fo, &err);
    test_expect_fail (f, &err, BL_EDATA, "neg.csv:6", "y + shift > 0", "1 value", what);
    test_job_free (&j);
  }
}
END_TEST

/* Option combinations the transform engine refuses (transform.c), each BL_ESPEC: a
   non-gaussian family or a non-identity link, --method wls, an offset, a fixed Box-Cox
   power outside [-3, 3]. */
START_TEST (transform_error_options)
{
  test_job j = { 0 };
  bl_fit_opts fo;
  bl_err err = { 0 };
  test_design_spec ds = { NULL, "log(load)", NULL, 0 };
  bl_fit *f;
  j.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j, "hours", "load", NULL);
  tr_opts (&fo, BL_TRANSFORM_LOG, NAN, 0);
  fo.method = BL_METHOD_GLM;
  fo.fam = &bl_family_gamma;
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_ESPEC, "--transform", "least squares", "--family", "log + gamma");
  tr_opts (&fo, BL_TRANSFORM_SQRT, NAN, 0);
  fo.method = BL_METHOD_GLM;
  fo.fam = &bl_family_poisson;
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_ESPEC, "--transform", "--family", NULL, "sqrt + poisson");
  tr_opts (&fo, BL_TRANSFORM_LOG, NAN, 0);
  fo.link = &bl_link_log;
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_ESPEC, "--transform", "--link", NULL, "log + log link");
  tr_opts (&fo, BL_TRANSFORM_LOG, NAN, 0);
  fo.method = BL_METHOD_WLS;
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_ESPEC, "--transform", "wls", NULL, "log + wls");
  tr_opts (&fo, BL_TRANSFORM_BOXCOX, 3.5, 0);
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_ESPEC, "--transform", "[-3, 3]", "3.5", "boxcox=3.5");
  test_job_free (&j);
  j.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j, "hours", "load", &ds);
  tr_opts (&fo, BL_TRANSFORM_LOG, NAN, 0);
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_ESPEC, "--offset", "offset", NULL, "log + offset");
  test_job_free (&j);
}
END_TEST

/* Allocation failures (DEVELOPERS.md, "Tests"; SQLite's malloc tests), a no-op without
   --enable-alloc-fail.  On tests/data/remedies.csv (80 rows), hours on (1, load):
   - the fit: for N = 1, 2, ... the N-th allocation fails until bl_fit_new succeeds; every
     failure is NULL with BL_ENOMEM and a message about memory, nothing leaks (the sanitizer
     build's leak check at exit), and the first success is the fit made without injection,
     bit for bit (test_alloc_fail_fit);
   - the smeared prediction: the fit (made without injection) saved as a model file, read
     back and used to predict on the same rows, N-th allocation failing, with the same
     assertions; the first success gives the predictions made without injection to the bit,
     and those means are Duan's smeared back-transform of the fit at each row's linear
     predictor (bl_fit_backtransform; model.h: the same sums), to 1e-12 relative (the model
     file carries the coefficients and the smearing sums in %.17g, which read back exactly,
     but x'b is summed again).
   log and sqrt take the closed-form smearing sums; Box-Cox (lambda estimated: the profile
   search, interval and practical power) the residual sum. */
static const struct {
  const char *what;
  bl_transform tr;
  double L;
  int est;
} tr_nomem_case[] = {
  { "transform nomem: log", BL_TRANSFORM_LOG, NAN, 0 },
  { "transform nomem: sqrt", BL_TRANSFORM_SQRT, NAN, 0 },
  { "transform nomem: boxcox est", BL_TRANSFORM_BOXCOX, 1.0, 1 }
};

typedef struct tr_predict {
  const bl_fit *fit;
  const bl_terms *terms;
  const bl_table *t;
  const char *path;
  const bl_prediction *ref;
  bl_prediction *p;
  const char *what;
} tr_predict;

/* Save C->fit as a model file, read it back and predict on C->t. */
static int
tr_predict_run (void *ctx, bl_err *err)
{
  tr_predict *c = ctx;
  FILE *f = fopen (c->path, "w");
  bl_model *m;
  int st;
  ck_assert_msg (f != NULL, "%s: cannot create %s", c->what, c->path);
  st = bl_model_write (f, c->fit, c->terms, NULL, NULL, err);
  ck_assert_int_eq (fclose (f), 0);
  if (st != BL_OK)
    return st;
  m = bl_model_read (c->path, err);
  if (!m)
    return err->code;
  c->p = bl_model_predict (m, c->t, 0.0, err);
  bl_model_free (m);
  return c->p ? BL_OK : err->code;
}

static void
tr_predict_after (void *ctx, int st, unsigned long n)
{
  tr_predict *c = ctx;
  const bl_prediction *p = c->p, *r = c->ref;
  ck_assert_msg ((st == BL_OK) == (p != NULL), "%s: status %d with a prediction %p", c->what,
                 st, (void *) p);
  if (p) {
    const double *const a[] = { p->mean, p->mean_lo, p->mean_hi, p->pred_lo, p->pred_hi,
                                p->median };
    const double *const b[] = { r->mean, r->mean_lo, r->mean_hi, r->pred_lo, r->pred_hi,
                                r->median };
    ck_assert_uint_eq (p->n, r->n);
    for (size_t k = 0; k < 6; k++)
      for (size_t i = 0; i < p->n; i++)
        ck_assert_msg (memcmp (&a[k][i], &b[k][i], sizeof (double)) == 0, "%s, allocation "
                       "%lu made to fail: column %zu row %zu %.17g, reference %.17g", c->what,
                       n, k, i, a[k][i], b[k][i]);
    ck_assert_msg (memcmp (&p->deviance, &r->deviance, sizeof (double)) == 0
                   && memcmp (&p->rmse, &r->rmse, sizeof (double)) == 0
                   && p->n_scored == r->n_scored, "%s, allocation %lu made to fail: scores",
                   c->what, n);
  }
  bl_prediction_free (c->p);
  c->p = NULL;
}

START_TEST (transform_error_alloc_failure)
{
  test_job j = { 0 };
  bl_fit_opts fo;
  bl_table_opts to;
  bl_table *nt;
  bl_model *m;
  bl_prediction *ref;
  bl_err err = { 0 };
  char dir[512], path[600], data[1024], what[128];
  tr_predict c;
  unsigned long n;
  FILE *f;
  j.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j, "hours", "load", NULL);
  tr_opts (&fo, tr_nomem_case[_i].tr, tr_nomem_case[_i].L, tr_nomem_case[_i].est);
  n = test_alloc_fail_fit (tr_nomem_case[_i].what, j.d, &fo, 1000000);
  /* at least the fit's own tables (fit.c alloc_tables: 12 arrays) */
  ck_assert_msg (n == 0 || n > 12, "%s: the loop ended at N = %lu", tr_nomem_case[_i].what, n);

  /* The reference prediction, without injection, against the smeared back-transform. */
  test_job_fit (&j, &fo, tr_nomem_case[_i].what);
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/model.json", dir);
  snprintf (what, sizeof what, "%s, predict", tr_nomem_case[_i].what);
  f = fopen (path, "w");
  ck_assert_ptr_nonnull (f);
  ck_assert_int_eq (bl_model_write (f, j.f, j.terms, NULL, NULL, &err), BL_OK);
  ck_assert_int_eq (fclose (f), 0);
  m = bl_model_read (path, &err);
  ck_assert_msg (m != NULL, "%s: read back: %s: %s", what, err.where, err.msg);
  bl_table_opts_init (&to);
  bl_model_table_opts (m, &to);
  nt = bl_table_read (test_data_path ("remedies.csv", data, sizeof data), &to, &err);
  ck_assert_msg (nt != NULL, "%s: new data: %s", what, err.msg);
  ref = bl_model_predict (m, nt, 0.0, &err);
  ck_assert_msg (ref != NULL, "%s: %s: %s", what, err.where, err.msg);
  bl_model_free (m);
  ck_assert_uint_eq (ref->n, bl_design_n (j.d));
  for (size_t i = 0; i < ref->n; i++) {
    const double sm = bl_fit_backtransform (j.f, bl_fit_eta (j.f)[i], 1);
    ck_assert_msg (test_rel (ref->mean[i], sm) <= 1e-12, "%s: row %zu mean %.17g, smeared "
                   "back-transform %.17g", what, i, ref->mean[i], sm);
  }

  /* The prediction loop. */
  c.fit = j.f;
  c.terms = j.terms;
  c.t = nt;
  c.path = path;
  c.ref = ref;
  c.p = NULL;
  c.what = what;
  n = test_alloc_fail_loop (what, tr_predict_run, tr_predict_after, &c, 100000, NULL);
  ck_assert_msg (n == 0 || n > 6, "%s: the loop ended at N = %lu", what, n);
  bl_prediction_free (ref);
  bl_table_free (nt);
  unlink (path);
  rmdir (dir);
  test_job_free (&j);
}
END_TEST


/* A back-transform beyond a double is an error with its reason, not inf or an empty cell
   (issue 13, class 2): a log fit predicted at x = 800, where exp(x'b) overflows (exp above
   709.78, IEEE 754 double range, common practice); the smeared mean of
   bl_fit_backtransform is then +inf, which predict refuses at the row's FILE:LINE. */
START_TEST (transform_error_backtransform_overflow)
{
  static const char csv[] = "y,x\n1.2,1\n2.9,2\n7.1,3\n20.5,4\n55,5\n150,6\n";
  static const char newcsv[] = "x\n3\n800\n";
  test_job j = { 0 };
  bl_fit_opts fo;
  bl_table_opts to;
  bl_table *nt;
  bl_model *m;
  bl_err err = { 0 };
  char dir[512], path[600];
  FILE *f;
  j.t = test_table_mem (csv, strlen (csv), "lg.csv", NULL, 0);
  test_job_design_spec (&j, "y", "x", NULL);
  tr_opts (&fo, BL_TRANSFORM_LOG, 1.0, 0);
  test_job_fit (&j, &fo, "log overflow");
  ck_assert (isinf (bl_fit_backtransform (j.f, 800.0, 1)));
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/model.json", dir);
  f = fopen (path, "w");
  ck_assert_ptr_nonnull (f);
  ck_assert_int_eq (bl_model_write (f, j.f, j.terms, NULL, NULL, &err), BL_OK);
  ck_assert_int_eq (fclose (f), 0);
  m = bl_model_read (path, &err);
  ck_assert_ptr_nonnull (m);
  bl_table_opts_init (&to);
  bl_model_table_opts (m, &to);
  nt = bl_table_read_mem (newcsv, strlen (newcsv), "new.csv", &to, &err);
  ck_assert_ptr_nonnull (nt);
  test_expect_fail (bl_model_predict (m, nt, 0.0, &err), &err, BL_EDATA, "new.csv:3",
                    "out of range for double precision", "'y'", "predict overflow");
  bl_model_free (m);
  bl_table_free (nt);
  unlink (path);
  rmdir (dir);
  test_job_free (&j);
}
END_TEST

/* ---------------------------------------------------------------- basics */

/* Back-transforms (transform.c): naive h^-1(xb) - shift for log, sqrt and Box-Cox, the means
   on the transformed scale, and no change for an untransformed fit. */
START_TEST (transform_backtransform_basics)
{
  test_job j = { 0 };
  bl_fit_opts fo;
  const double xb = 1.234;
  j.t = test_table_file ("remedies.csv", NULL, 0);
  test_job_design_spec (&j, "hours", "load", NULL);
  tr_opts (&fo, BL_TRANSFORM_LOG, NAN, 0);
  fo.shift_given = 1;
  fo.shift = 0.75;
  test_job_fit (&j, &fo, "log shift");
  ck_assert_msg (test_rel (bl_fit_backtransform (j.f, xb, 0), exp (xb) - 0.75) <= 1e-15,
                 "log shift naive");
  ck_assert_msg (test_rel (bl_fit_y (j.f)[0], log (test_table_col (j.t, "hours")[0] + 0.75))
                 <= 1e-15, "log shift: fitted response");
  bl_fit_free (j.f);
  tr_opts (&fo, BL_TRANSFORM_SQRT, NAN, 0);
  test_job_fit (&j, &fo, "sqrt");
  ck_assert_msg (test_rel (bl_fit_backtransform (j.f, xb, 0), xb * xb) <= 1e-15, "sqrt naive");
  bl_fit_free (j.f);
  tr_opts (&fo, BL_TRANSFORM_BOXCOX, 0.37, 0);
  test_job_fit (&j, &fo, "boxcox 0.37");
  ck_assert_msg (test_rel (bl_fit_backtransform (j.f, xb, 0), pow (1.0 + 0.37 * xb, 1.0 / 0.37))
                 <= 1e-14, "boxcox naive");
  ck_assert_msg (isnan (bl_fit_transform (j.f)->lambda_lo), "boxcox fixed: lambda_lo");
  ck_assert_int_eq (bl_fit_transform (j.f)->lambda_estimated, 0);
  bl_fit_free (j.f);
  bl_fit_opts_init (&fo);
  fo.method = BL_METHOD_OLS;
  test_job_fit (&j, &fo, "none");
  ck_assert_msg (bl_fit_backtransform (j.f, xb, 1) == xb, "none: back-transform");
  ck_assert_msg (bl_fit_transform (j.f)->name == NULL, "none: name");
  ck_assert_msg (isnan (bl_fit_stats_get (j.f)->loglik_transformed), "none: loglik_transformed");
  test_job_free (&j);
}
END_TEST

static Suite *
transform_suite (void)
{
  Suite *s = suite_create ("transform");
  TCase *ref = tcase_create ("reference");
  TCase *idt = tcase_create ("identities");
  TCase *err = tcase_create ("errors");
  TCase *bas = tcase_create ("basics");
  tcase_add_test (ref, transform_boxcox_scipy);
  tcase_add_test (ref, transform_boxcox_profile);
  tcase_add_test (ref, transform_boxcox_open);
  tcase_add_test (ref, transform_boxcox_scales);
  tcase_add_test (ref, transform_boxcox_issue);
  tcase_add_test (idt, transform_boxcox_edge);
  tcase_add_test (idt, transform_loglik_jacobian);
  tcase_add_test (idt, transform_smearing_lognormal);
  tcase_add_test (err, transform_error_nonpositive);
  tcase_add_test (err, transform_error_options);
  tcase_add_test (err, transform_error_backtransform_overflow);
  tcase_add_loop_test (err, transform_error_alloc_failure, 0,
                       (int) (sizeof tr_nomem_case / sizeof tr_nomem_case[0]));
  tcase_add_test (bas, transform_backtransform_basics);
  tcase_set_timeout (ref, 120);
  tcase_set_timeout (idt, 300);
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
  return test_run_suite (transform_suite (), 1);
}
