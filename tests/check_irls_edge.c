/* check_irls_edge.c -- the IRLS iteration's limits and its edge of the parameter space
   (irls.c, fit_glm.c; issue 13, classes 7 and 8).

   - reference: the family/link pairs whose maximum can lie on the edge of the parameter space
     (a mean running to 0 or to infinity at finite coefficients) and pairs whose maximum is
     interior next to it, against a SciPy constrained minimization of the deviance
     (tests/reference/boundary.py -> boundary.txt, data tests/data/boundary.csv);
   - identities: the no-maximum condition of a level whose y are all <= 0 under the gaussian
     family with the log link (a closed form: each such row's deviance (y - mu)^2 falls as
     mu -> 0);
   - basics: --max-iter counts every step (the coefficient test's and the finishing move
     included), --epsilon moves the stopping point both ways. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "fit.h"
#include "testutil.h"

typedef struct edge_ref {
  char name[32], fam[32], link[32], col[32];
  int edge;                   /* 1: the maximum is on the edge */
  size_t active[4], nactive;  /* 1-based data rows where eta = 0 on the edge */
  double dev, beta[2];
} edge_ref;

static size_t
read_edge_refs (edge_ref *r, size_t cap)
{
  char path[1024], line[512];
  size_t nr = 0;
  FILE *fp = fopen (test_data_path ("../reference/boundary.txt", path, sizeof path), "r");
  ck_assert_msg (fp != NULL, "open %s", path);
  while (fgets (line, sizeof line, fp)) {
    edge_ref *c = nr ? &r[nr - 1] : NULL;
    char kind[16];
    int used = 0;
    if (line[0] == '#')
      continue;
    if (strncmp (line, "case ", 5) == 0) {
      ck_assert (nr < cap);
      c = &r[nr++];
      memset (c, 0, sizeof *c);
      ck_assert (sscanf (line + 5, "%31s %31s %31s %31s", c->name, c->fam, c->link,
                         c->col) == 4);
    } else if (c && sscanf (line, "kind %15s", kind) == 1) {
      c->edge = strcmp (kind, "edge") == 0;
    } else if (c && strncmp (line, "active", 6) == 0) {
      const char *s = line + 6;
      size_t v;
      while (c->nactive < 4 && sscanf (s, "%zu%n", &v, &used) == 1) {
        c->active[c->nactive++] = v;
        s += used;
      }
    } else if (c && sscanf (line, "deviance %lf", &c->dev) == 1) {
      continue;
    } else if (c) {
      sscanf (line, "beta %lf %lf", &c->beta[0], &c->beta[1]);
    }
  }
  fclose (fp);
  return nr;
}

/* Fit COL ~ x of boundary.csv with FAM/LNK and options FO (NULL: the defaults) into J. */
static const bl_fit *
edge_fit (test_job *j, const char *col, const char *fam, const char *lnk,
          const bl_fit_opts *fo)
{
  bl_fit_opts o;
  bl_err e;
  if (fo)
    o = *fo;
  else
    bl_fit_opts_init (&o);
  o.fam = bl_family_find (fam);
  o.link = bl_link_find (lnk);
  ck_assert (o.fam && o.link);
  j->t = test_table_file ("boundary.csv", NULL, 0);
  test_job_design (j, col, "x", NULL, NULL);
  j->f = bl_fit_new (j->d, &o, &e);
  ck_assert_msg (j->f != NULL, "%s %s %s: %s", col, fam, lnk, e.msg);
  return j->f;
}

/* SciPy reference (boundary.txt): on the edge the fit is not reported converged; its status
   (BL_EDATA) says there is no interior maximum and names the CSV line of the row SciPy finds
   at eta = 0 (data row + 1), every figure is null with the boundary as the reason, and the
   steps stayed within --max-iter.  Interior: converged, beta within 1e-8 (|b| + 1) of
   SciPy's, and no boundary. */
START_TEST (irls_edge_reference)
{
  edge_ref r[16];
  const size_t nr = read_edge_refs (r, 16);
  size_t nedge = 0, nint = 0;
  ck_assert_uint_eq (nr, 7);
  for (size_t c = 0; c < nr; c++) {
    test_job j = { 0 };
    const bl_fit *f = edge_fit (&j, r[c].col, r[c].fam, r[c].link, NULL);
    const bl_fit_stats *st = bl_fit_stats_get (f);
    const bl_err *s = bl_fit_status (f);
    ck_assert_msg (st->iterations <= BL_IRLS_MAX_ITER, "%s: %zu iterations", r[c].name,
                   st->iterations);
    if (r[c].edge) {
      char line[64];
      nedge++;
      ck_assert_uint_ge (r[c].nactive, 1);
      snprintf (line, sizeof line, "boundary.csv:%zu ", r[c].active[0] + 1);
      ck_assert_msg (!st->converged, "%s: reported converged", r[c].name);
      ck_assert_msg (s->code == BL_EDATA, "%s: status %d (%s)", r[c].name, s->code, s->msg);
      ck_assert_msg (strstr (s->msg, "no interior maximum") && strstr (s->msg, line),
                     "%s: message '%s' lacks 'no interior maximum' or '%s'", r[c].name,
                     s->msg, line);
      ck_assert_msg (strstr (s->msg, r[c].link), "%s: message names no link", r[c].name);
      ck_assert_msg (isnan (bl_fit_beta (f)[1]) && isnan (st->loglik)
                     && strstr (st->loglik_why, "boundary"), "%s: figures or reasons",
                     r[c].name);
    } else {
      nint++;
      ck_assert_msg (st->converged, "%s: not converged: %s", r[c].name, s->msg);
      for (size_t k = 0; k < 2; k++) {
        const double d = fabs (bl_fit_beta (f)[k] - r[c].beta[k]) / (fabs (r[c].beta[k]) + 1);
        ck_assert_msg (d <= 1e-8, "%s beta[%zu] = %.17g, ref %.17g (%.2g)", r[c].name, k,
                       bl_fit_beta (f)[k], r[c].beta[k], d);
      }
      ck_assert_msg (test_rel (st->deviance, r[c].dev) <= 1e-9, "%s deviance %.17g ref %.17g",
                     r[c].name, st->deviance, r[c].dev);
    }
    fprintf (stderr, "edge %-13s %s: %zu iterations, %zu halvings\n", r[c].name,
             r[c].edge ? "edge    " : "interior", st->iterations, st->halvings);
    test_job_free (&j);
  }
  ck_assert (nedge >= 3 && nint >= 4);
}
END_TEST

/* Closed form: a level whose y are all <= 0 (one exactly 0, two negative) under the gaussian
   family with the log link.  Each of its rows has deviance (y - mu)^2, which falls as mu
   falls to 0 for y <= 0, so no maximum exists (the level's coefficient runs off); refused
   before the fit, naming the level and '<= 0'.  With one y > 0 in the level the check does
   not apply. */
START_TEST (irls_edge_gaussian_log_level)
{
  static const char csv[] = "g,y\na,-0.31\na,0\na,-1.27\nb,1.9\nb,3.2\nb,2.6\nc,4.1\nc,2.2\n"
                            "c,5.3\n";
  static const char *const cat[] = { "g" };
  bl_fit_opts o;
  bl_err e;
  test_job j = { 0 };
  bl_fit *f;
  bl_fit_opts_init (&o);
  o.link = &bl_link_log;
  j.t = test_table_mem (csv, sizeof csv - 1, "lvl.csv", cat, 1);
  test_job_design (&j, "y", "g", NULL, NULL);
  f = bl_fit_new (j.d, &o, &e);
  test_expect_fail (f, &e, BL_EDATA, "lvl.csv", "level 'a' of 'g'", "is <= 0 on all 3 rows",
                    "gaussian log level <= 0");
  test_job_free (&j);
}
END_TEST

/* --max-iter counts every step (doc/cli.md): a gamma/log fit that converges in N steps by
   default (the last the finishing move) fails with "no convergence in M iterations" and M
   iterations reported for every M < N - 1; with M = N - 1 it converges without the finishing
   move, and with M = N in exactly N. */
START_TEST (irls_max_iter_counts)
{
  bl_fit_opts o;
  size_t n;
  test_job j = { 0 };
  bl_fit_opts_init (&o);
  n = bl_fit_stats_get (edge_fit (&j, "y_decay", "gamma", "log", &o))->iterations;
  ck_assert (bl_fit_stats_get (j.f)->converged);
  test_job_free (&j);
  ck_assert_uint_ge (n, 4);
  for (size_t m = 1; m <= n; m++) {
    const bl_fit_stats *st;
    char want[64];
    o.irls.max_iter = m;
    st = bl_fit_stats_get (edge_fit (&j, "y_decay", "gamma", "log", &o));
    ck_assert_msg (st->iterations <= m, "max-iter %zu: %zu iterations", m, st->iterations);
    snprintf (want, sizeof want, "no convergence in %zu iteration", m);
    if (m + 1 < n)
      ck_assert_msg (!st->converged && strstr (bl_fit_status (j.f)->msg, want),
                     "max-iter %zu of %zu: converged %d (%s)", m, n, st->converged,
                     bl_fit_status (j.f)->msg);
    else
      ck_assert_msg (st->converged && st->iterations == m, "max-iter %zu: converged %d, "
                     "%zu iterations", m, st->converged, st->iterations);
    test_job_free (&j);
  }
}
END_TEST

/* --epsilon acts at every value: over 1e-2 .. 1e-14 the step count never falls as epsilon
   tightens, a loose epsilon (1e-3) stops earlier than the default 1e-10 and, for the
   inverse gaussian, a tight one (1e-14) later, and the deviance reached is within epsilon (|D| + 0.1) of the tightest fit's
   (the documented test, doc/cli.md: near the optimum the deviance converges quadratically).
   Inverse gaussian with the identity link and the gamma with the inverse link (boundary.csv,
   both interior). */
START_TEST (irls_epsilon_acts)
{
  static const double eps[] = { 1e-2, 1e-3, 1e-4, 1e-6, 1e-8, 1e-10, 1e-12, 1e-14 };
  static const char *const cases[][3] = { { "y_near", "inverse-gaussian", "identity" },
                                          { "y_decay", "gamma", "inverse" } };
  const size_t ne = sizeof eps / sizeof eps[0];
  for (size_t c = 0; c < 2; c++) {
    size_t it[8];
    double dev[8];
    for (size_t k = 0; k < ne; k++) {
      bl_fit_opts o;
      test_job j = { 0 };
      const bl_fit_stats *st;
      bl_fit_opts_init (&o);
      o.irls.epsrel = eps[k];
      st = bl_fit_stats_get (edge_fit (&j, cases[c][0], cases[c][1], cases[c][2], &o));
      ck_assert_msg (st->converged, "%s eps %g", cases[c][1], eps[k]);
      it[k] = st->iterations;
      dev[k] = st->deviance;
      test_job_free (&j);
    }
    fprintf (stderr, "epsilon %s %s: iterations", cases[c][1], cases[c][2]);
    for (size_t k = 0; k < ne; k++)
      fprintf (stderr, " %g:%zu", eps[k], it[k]);
    fprintf (stderr, "\n");
    for (size_t k = 1; k < ne; k++)
      ck_assert_msg (it[k] >= it[k - 1], "%s: %zu steps at %g, %zu at %g", cases[c][1],
                     it[k], eps[k], it[k - 1], eps[k - 1]);
    /* the gamma case reaches the rounding floor at the default already: 1e-14 stops there */
    ck_assert_msg (it[1] < it[5] && (c == 1 || it[7] > it[5]), "%s: %zu / %zu / %zu steps "
                   "at 1e-3, 1e-10, 1e-14", cases[c][1], it[1], it[5], it[7]);
    for (size_t k = 0; k < ne; k++)
      ck_assert_msg (fabs (dev[k] - dev[ne - 1]) <= eps[k] * (fabs (dev[ne - 1]) + 0.1),
                     "%s eps %g: deviance %.17g, tight %.17g", cases[c][1], eps[k], dev[k],
                     dev[ne - 1]);
  }
}
END_TEST

static Suite *
edge_suite (void)
{
  Suite *s = suite_create ("irls_edge");
  TCase *ref = tcase_create ("reference");
  TCase *idt = tcase_create ("identities");
  TCase *bas = tcase_create ("basics");
  tcase_add_test (ref, irls_edge_reference);
  tcase_add_test (idt, irls_edge_gaussian_log_level);
  tcase_add_test (bas, irls_max_iter_counts);
  tcase_add_test (bas, irls_epsilon_acts);
  tcase_set_timeout (ref, 120);
  tcase_set_timeout (idt, 120);
  tcase_set_timeout (bas, 120);
  suite_add_tcase (s, ref);
  suite_add_tcase (s, idt);
  suite_add_tcase (s, bas);
  return s;
}

int
main (void)
{
  return test_run_suite (edge_suite (), 1);
}
