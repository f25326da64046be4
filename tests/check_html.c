/* check_html.c -- the HTML report writer (batch.h: bl_report_job_html, bl_report_html_page)
   and the plot data it takes from diag.h (bl_variance_power).

   Every comparison goes through the public pipeline (bl_table_read_mem -> bl_terms_parse ->
   bl_design_new -> bl_compare_run or bl_fit_new), on gamma data simulated in the test with
   GSL generators and fixed seeds.  The checks, each with its source beside it:
   - reference: the variance power's plot points against group means computed here and its
     slope and intercept against GSL's gsl_fit_linear on those points;
   - identities: the page is well-formed (a small XML checker written here: balanced tags,
     closed void elements, quoted attributes, only the five XML entities and numeric
     references), every <svg> opens with a non-empty <title>, the same input gives the same
     bytes, the normal quantile plot holds min(n, 2000) points;
   - errors: a write failure (/dev/full) is BL_EIO, contradictory arguments BL_EINTERNAL, each
     with where and message; allocation failures (in an --enable-alloc-fail build) BL_ENOMEM;
   - basics: escaping of job names, messages and labels; no network reference or script; the
     binned density above 2000 rows; a single model's coefficient table; a failed job. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_fit.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>
#include "alloc.h"
#include "job.h"
#include "report_impl.h"
#include "compare.h"
#include "design.h"
#include "diag.h"
#include "order.h"
#include "fit.h"
#include "table.h"
#include "terms.h"
#include "testutil.h"

/* ---------------------------------------------------------------- helpers */

/* Everything one job needs, freed together by job_free. */
typedef struct job {
  test_buf csv;
  bl_table *t;
  bl_terms *terms;
  bl_design *d;
  bl_compare *c;
  bl_fit *f;
} job;

static void
job_free (job *j)
{
  bl_compare_free (j->c);
  bl_fit_free (j->f);
  bl_design_free (j->d);
  bl_terms_free (j->terms);
  bl_table_free (j->t);
  free (j->csv.s);
  memset (j, 0, sizeof *j);
}

/* N rows "y,x,g" of gamma data, log mu = 1 + 0.8 x, shape 3, x uniform(0, 2), g a factor
   with levels "a<b" and "c&d" (labels that need escaping) and no effect; seed 4711. */
static void
job_data (job *j, size_t n, const char *resp_col)
{
  bl_err err = { 0 };
  bl_design_opts dopt;
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  ck_assert_ptr_nonnull (r);
  gsl_rng_set (r, 4711);
  test_buf_printf (&j->csv, "%s,x,g\n", resp_col);
  for (size_t i = 0; i < n; i++) {
    const double x = 2.0 * gsl_rng_uniform (r);
    const double mu = exp (1.0 + 0.8 * x);
    test_buf_printf (&j->csv, "%.6g,%.6g,%s\n", gsl_ran_gamma (r, 3.0, mu / 3.0), x,
                     gsl_rng_uniform (r) < 0.5 ? "a<b" : "\"c&d\"");
  }
  gsl_rng_free (r);
  j->t = bl_table_read_mem (j->csv.s, j->csv.len, "mem.csv", NULL, &err);
  ck_assert_msg (j->t != NULL, "read: %s: %s", err.where, err.msg);
  j->terms = bl_terms_parse ("x, g", "--terms", &err);
  ck_assert_msg (j->terms != NULL, "terms: %s", err.msg);
  bl_design_opts_init (&dopt);
  j->d = bl_design_new (j->t, resp_col, j->terms, &dopt, &err);
  ck_assert_msg (j->d != NULL, "design: %s: %s", err.where, err.msg);
}

static void
job_compare (job *j, size_t n)
{
  bl_err err = { 0 };
  bl_compare_opts co;
  job_data (j, n, "hours");
  bl_compare_opts_init (&co);
  co.folds = 0;
  co.null_reps = 400;
  j->c = bl_compare_run (j->d, &co, &err);
  ck_assert_msg (j->c != NULL, "compare: %s", err.msg);
  ck_assert_int_ge (bl_compare_winner (j->c), 0);
}

static void
job_single (job *j, size_t n)
{
  bl_err err = { 0 };
  bl_fit_opts fo;
  job_data (j, n, "hours");
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_gamma;
  fo.link = &bl_link_log;
  j->f = bl_fit_new (j->d, &fo, &err);
  ck_assert_msg (j->f != NULL, "fit: %s", err.msg);
  ck_assert (bl_fit_stats_get (j->f)->converged);
}

static void
row_init (bl_batch_row *row, const char *name, int ok, const char *method)
{
  memset (row, 0, sizeof *row);
  snprintf (row->job, sizeof row->job, "%s", name);
  row->ok = ok;
  snprintf (row->method, sizeof row->method, "%s", method);
  row->aic = row->delta = row->spread_ratio = NAN;
}

/* The section of one job as a string (caller frees); asserts success. */
static char *
section (const bl_batch_row *row, const bl_compare *c, const bl_fit *f, const bl_design *d)
{
  bl_err err = { 0 };
  char *s = NULL;
  size_t len = 0;
  FILE *m = open_memstream (&s, &len);
  int st;
  ck_assert_ptr_nonnull (m);
  st = bl_report_job_html (m, row, c, f, d, 20261201UL, NULL, &err);
  ck_assert_int_eq (fclose (m), 0);
  ck_assert_msg (st == BL_OK, "section '%s': %d %s: %s", row->job, st, err.where, err.msg);
  return s;
}

static char *
page (const bl_batch_row *rows, char **sections, size_t n)
{
  bl_err err = { 0 };
  char *s = NULL;
  size_t len = 0;
  FILE *m = open_memstream (&s, &len);
  int st;
  ck_assert_ptr_nonnull (m);
  st = bl_report_html_page (m, "report <of> \"jobs\" & more", rows,
                            (const char *const *) sections, n, &err);
  ck_assert_int_eq (fclose (m), 0);
  ck_assert_msg (st == BL_OK, "page: %d %s: %s", st, err.where, err.msg);
  return s;
}

/* A small XML well-formedness check (enough for the writer's output; XML 1.0, W3C 2008,
   sections 2.1-2.4 and 3.1, from memory): an optional "<!DOCTYPE html>" first, then
   balanced elements; attributes quoted with '"'; '<' never in text or values; '&' only as
   &amp; &lt; &gt; &quot; &#39; or a numeric reference.  0 when well-formed, else 1 with WHY. */
static int
entity_ok (const char *s, size_t *len)
{
  static const char *const named[] = { "&amp;", "&lt;", "&gt;", "&quot;", "&#39;" };
  for (size_t k = 0; k < 5; k++)
    if (strncmp (s, named[k], strlen (named[k])) == 0) {
      *len = strlen (named[k]);
      return 1;
    }
  if (s[1] == '#') {
    size_t i = 2;
    while (s[i] >= '0' && s[i] <= '9')
      i++;
    if (i > 2 && s[i] == ';') {
      *len = i + 1;
      return 1;
    }
  }
  return 0;
}

static int
wellformed (const char *s, char *why, size_t cap)
{
  char stack[64][32];
  size_t depth = 0, len;
  const char *p = s;
  if (strncmp (p, "<!DOCTYPE html>", 15) == 0)
    p += 15;
  while (*p) {
    if (*p == '&') {
      if (!entity_ok (p, &len)) {
        snprintf (why, cap, "bad '&' at byte %ld", (long) (p - s));
        return 1;
      }
      p += len;
    } else if (*p == '>') {
      snprintf (why, cap, "raw '>' in text at byte %ld", (long) (p - s));
      return 1;
    } else if (*p != '<') {
      p++;
    } else if (p[1] == '/') {
      const char *q = p + 2;
      while (*q && *q != '>')
        q++;
      if (!depth || (size_t) (q - p - 2) != strlen (stack[depth - 1])
          || strncmp (p + 2, stack[depth - 1], (size_t) (q - p - 2)) != 0) {
        snprintf (why, cap, "unbalanced close tag '%.20s' at byte %ld (open: '%s')", p,
                  (long) (p - s), depth ? stack[depth - 1] : "");
        return 1;
      }
      depth--;
      p = q + 1;
    } else {
      const char *q = p + 1;
      size_t nl = 0;
      while ((*q >= 'a' && *q <= 'z') || (*q >= 'A' && *q <= 'Z') || (*q >= '0' && *q <= '9'))
        q++;
      nl = (size_t) (q - p - 1);
      if (nl == 0 || nl >= sizeof stack[0]) {
        snprintf (why, cap, "bad tag at byte %ld", (long) (p - s));
        return 1;
      }
      for (;;) {
        while (*q == ' ' || *q == '\n')
          q++;
        if (q[0] == '/' && q[1] == '>') {
          q += 2;
          break;
        }
        if (*q == '>') {
          if (depth == 64) {
            snprintf (why, cap, "too deep");
            return 1;
          }
          memcpy (stack[depth], p + 1, nl);
          stack[depth++][nl] = '\0';
          q++;
          break;
        }
        while ((*q >= 'a' && *q <= 'z') || *q == '-' || *q == ':' || (*q >= 'A' && *q <= 'Z')
               || (*q >= '0' && *q <= '9'))
          q++;
        if (q[0] != '=' || q[1] != '"') {
          snprintf (why, cap, "unquoted attribute at byte %ld: '%.30s'", (long) (q - s), q);
          return 1;
        }
        q += 2;
        while (*q && *q != '"') {
          if (*q == '<' || (*q == '&' && !entity_ok (q, &len))) {
            snprintf (why, cap, "bad character in an attribute at byte %ld", (long) (q - s));
            return 1;
          }
          q++;
        }
        if (!*q) {
          snprintf (why, cap, "attribute not closed");
          return 1;
        }
        q++;
      }
      p = q;
    }
  }
  if (depth) {
    snprintf (why, cap, "'%s' not closed", stack[depth - 1]);
    return 1;
  }
  return 0;
}

static size_t
count (const char *s, const char *needle)
{
  size_t k = 0;
  for (const char *p = strstr (s, needle); p; p = strstr (p + 1, needle))
    k++;
  return k;
}

/* Every "<svg" is followed by its open tag's end and then a non-empty <title>. */
static void
assert_svg_titles (const char *s, const char *name)
{
  size_t k = 0;
  for (const char *p = strstr (s, "<svg"); p; p = strstr (p + 1, "<svg"), k++) {
    const char *e = strchr (p, '>');
    ck_assert_msg (e && strncmp (e + 1, "<title>", 7) == 0, "%s: svg %zu has no title", name,
                   k);
    ck_assert_msg (e[8] != '<', "%s: svg %zu has an empty title", name, k);
  }
  ck_assert_msg (k > 0, "%s: no svg", name);
}

/* The substring of S from the first NEEDLE to the next END (caller frees). */
static char *
slice (const char *s, const char *needle, const char *end)
{
  const char *a = strstr (s, needle), *b;
  char *out;
  ck_assert_msg (a != NULL, "no '%s'", needle);
  b = strstr (a, end);
  ck_assert_msg (b != NULL, "no '%s' after '%s'", end, needle);
  out = malloc ((size_t) (b - a) + 1);
  ck_assert_ptr_nonnull (out);
  memcpy (out, a, (size_t) (b - a));
  out[b - a] = '\0';
  return out;
}

/* ---------------------------------------------------------------- reference */

/* bl_variance_power's points: group g holds rows floor(g n / G) .. floor((g+1) n / G) - 1
   by fitted value (diag.h), G = min(n / 20, 20); log_mean = log of the group's mean fitted
   value, log_var = log of its mean squared raw residual, computed here directly; slope and
   intercept against gsl_fit_linear on those points (GSL reference). */
START_TEST (html_power_points)
{
  job j = { 0 };
  bl_power pw;
  bl_err err = { 0 };
  const size_t n = 500, G = 20;
  size_t *order = malloc (n * sizeof *order);
  double lm[20], lv[20], c0, c1, cov00, cov01, cov11, sumsq;
  job_single (&j, n);
  ck_assert_ptr_nonnull (order);
  ck_assert_int_eq (bl_variance_power (j.f, &pw, &err), BL_OK);
  ck_assert_msg (pw.done, "power: %s", pw.why);
  ck_assert_uint_eq (pw.groups_used, G);
  ck_assert_int_eq (bl_order_by (bl_fit_mu (j.f), n, order, &err), BL_OK);
  for (size_t g = 0; g < G; g++) {
    const size_t a = g * n / G, b = (g + 1) * n / G;
    const double *mu = bl_fit_mu (j.f), *y = bl_design_y (j.d);
    double sm = 0.0, ss = 0.0;
    for (size_t k = a; k < b; k++) {
      sm += mu[order[k]];
      ss += (y[order[k]] - mu[order[k]]) * (y[order[k]] - mu[order[k]]);
    }
    lm[g] = log (sm / (double) (b - a));
    lv[g] = log (ss / (double) (b - a));
    ck_assert_msg (lre (pw.log_mean[g], lm[g]) >= 12.0, "power_points log_mean[%zu]: LRE %.1f",
                   g, lre (pw.log_mean[g], lm[g]));
    ck_assert_msg (lre (pw.log_var[g], lv[g]) >= 12.0, "power_points log_var[%zu]: LRE %.1f", g,
                   lre (pw.log_var[g], lv[g]));
  }
  gsl_fit_linear (lm, 1, lv, 1, G, &c0, &c1, &cov00, &cov01, &cov11, &sumsq);
  ck_assert_msg (lre (pw.estimate, c1) >= 10.0, "power_points slope: LRE %.1f",
                 lre (pw.estimate, c1));
  ck_assert_msg (lre (pw.intercept, c0) >= 10.0, "power_points intercept: LRE %.1f",
                 lre (pw.intercept, c0));
  free (order);
  job_free (&j);
}
END_TEST

/* ---------------------------------------------------------------- identities */

/* A whole page (a comparison, a single model, a failed job) is well-formed, every plot is
   an <svg> with a title, and rendering again gives the same bytes. */
START_TEST (html_page_wellformed_deterministic)
{
  job a = { 0 }, b = { 0 };
  bl_batch_row rows[3];
  char *sec[3], *p1, *p2, why[256];
  job_compare (&a, 300);
  job_single (&b, 300);
  row_init (&rows[0], "cmp-1", 1, "compare");
  row_init (&rows[1], "single_2", 1, "glm");
  row_init (&rows[2], "broken.3", 0, "compare");
  snprintf (rows[2].message, sizeof rows[2].message, "data/none.csv: cannot open");
  sec[0] = section (&rows[0], a.c, NULL, a.d);
  sec[1] = section (&rows[1], NULL, b.f, b.d);
  sec[2] = section (&rows[2], NULL, NULL, NULL);
  p1 = page (rows, sec, 3);
  ck_assert_msg (wellformed (p1, why, sizeof why) == 0, "page_wellformed: %s", why);
  assert_svg_titles (p1, "page_wellformed");
  for (int k = 0; k < 3; k++) {
    char *again = section (&rows[k], k == 0 ? a.c : NULL, k == 1 ? b.f : NULL,
                           k == 2 ? NULL : (k == 0 ? a.d : b.d));
    ck_assert_msg (strcmp (again, sec[k]) == 0, "page_deterministic: section %d differs", k);
    free (again);
  }
  p2 = page (rows, sec, 3);
  ck_assert_msg (strcmp (p1, p2) == 0, "page_deterministic: page differs");
  /* the sections are linked from the summary */
  ck_assert_msg (strstr (p1, "href=\"#job-cmp-1\"") && strstr (p1, "id=\"job-cmp-1\""),
                 "page_links: cmp-1");
  ck_assert_msg (strstr (p1, "href=\"#job-broken.3\"") && strstr (p1, "id=\"job-broken.3\""),
                 "page_links: broken.3");
  for (int k = 0; k < 3; k++)
    free (sec[k]);
  free (p1);
  free (p2);
  job_free (&a);
  job_free (&b);
}
END_TEST

/* The normal quantile plot shows min(n, BL_HTML_MAX_POINTS = 2000) points, and a residual
   panel above 2000 rows is a density (no points); at or below, one point per row. */
START_TEST (html_point_limits)
{
  static const size_t ns[] = { 300, 2500 };
  for (size_t t = 0; t < 2; t++) {
    job j = { 0 };
    bl_batch_row row;
    char *s, *qq, *rp, why[256];
    job_single (&j, ns[t]);
    row_init (&row, "limits", 1, "glm");
    s = section (&row, NULL, j.f, j.d);
    ck_assert_msg (wellformed (s, why, sizeof why) == 0, "point_limits n=%zu: %s", ns[t], why);
    qq = slice (s, "<title>normal quantile plot", "</svg>");
    ck_assert_msg (count (qq, "<circle") == (ns[t] < 2000 ? ns[t] : 2000),
                   "point_limits n=%zu: %zu quantile points", ns[t], count (qq, "<circle"));
    rp = slice (s, "<title>Pearson residuals against", "</svg>");
    if (ns[t] > 2000) {
      ck_assert_msg (strstr (rp, "class=\"dens\"") && !strstr (rp, "<circle"),
                     "point_limits n=%zu: no density", ns[t]);
    } else {
      ck_assert_msg (count (rp, "<circle") <= ns[t] && count (rp, "<circle") >= ns[t] - 2,
                     "point_limits n=%zu: %zu residual points", ns[t], count (rp, "<circle"));
    }
    free (qq);
    free (rp);
    free (s);
    job_free (&j);
  }
}
END_TEST

/* ---------------------------------------------------------------- errors */

/* Contradictory arguments: both a comparison and a fit; no row; page rows missing. */
START_TEST (html_errors_arguments)
{
  job a = { 0 }, b = { 0 };
  bl_batch_row row;
  bl_err err = { 0 };
  FILE *m = fopen ("/dev/null", "w");
  ck_assert_ptr_nonnull (m);
  job_compare (&a, 120);
  job_single (&b, 120);
  row_init (&row, "both", 1, "compare");
  ck_assert_int_eq (bl_report_job_html (m, &row, a.c, b.f, a.d, 1, NULL, &err), BL_EINTERNAL);
  ck_assert_str_eq (err.where, "report");
  ck_assert_msg (strstr (err.msg, "job 'both': both a comparison and a single model"),
                 "errors_arguments both: '%s'", err.msg);
  memset (&err, 0, sizeof err);
  ck_assert_int_eq (bl_report_job_html (m, NULL, a.c, NULL, a.d, 1, NULL, &err), BL_EINTERNAL);
  ck_assert_str_eq (err.where, "report");
  ck_assert_msg (strstr (err.msg, "no summary row"), "errors_arguments row: '%s'", err.msg);
  memset (&err, 0, sizeof err);
  ck_assert_int_eq (bl_report_job_html (m, &row, a.c, NULL, NULL, 1, NULL, &err), BL_EINTERNAL);
  ck_assert_msg (strstr (err.msg, "no design given"), "errors_arguments design: '%s'",
                 err.msg);
  memset (&err, 0, sizeof err);
  ck_assert_int_eq (bl_report_html_page (m, "t", NULL, NULL, 2, &err), BL_EINTERNAL);
  ck_assert_str_eq (err.where, "report");
  ck_assert_msg (strstr (err.msg, "no summary rows"), "errors_arguments page: '%s'", err.msg);
  fclose (m);
  job_free (&a);
  job_free (&b);
}
END_TEST

/* A set cancel flag: the section stops before its first plot with BL_ECANCEL (the batch
   runner then writes nothing of the job); a clear flag changes nothing. */
START_TEST (html_errors_cancel)
{
  job a = { 0 }, b = { 0 };
  bl_batch_row row;
  bl_err err = { 0 };
  volatile sig_atomic_t stop = 1;
  FILE *m = fopen ("/dev/null", "w");
  ck_assert_ptr_nonnull (m);
  job_compare (&a, 120);
  job_single (&b, 120);
  row_init (&row, "cut", 1, "compare");
  ck_assert_int_eq (bl_report_job_html (m, &row, a.c, NULL, a.d, 1, &stop, &err), BL_ECANCEL);
  ck_assert_str_eq (err.where, "report");
  ck_assert_msg (strstr (err.msg, "cancelled"), "errors_cancel compare: '%s'", err.msg);
  memset (&err, 0, sizeof err);
  ck_assert_int_eq (bl_report_job_html (m, &row, NULL, b.f, b.d, 1, &stop, &err), BL_ECANCEL);
  stop = 0;
  ck_assert_int_eq (bl_report_job_html (m, &row, a.c, NULL, a.d, 1, &stop, &err), BL_OK);
  ck_assert_int_eq (bl_report_job_html (m, &row, NULL, b.f, b.d, 1, &stop, &err), BL_OK);
  fclose (m);
  job_free (&a);
  job_free (&b);
}
END_TEST

/* A failing write: /dev/full accepts nothing (Linux), so the flush fails. */
START_TEST (html_errors_write)
{
  job a = { 0 };
  bl_batch_row row;
  bl_err err = { 0 };
  FILE *m = fopen ("/dev/full", "w");
  if (!m)
    return;                              /* no /dev/full here: nothing to provoke */
  job_compare (&a, 120);
  row_init (&row, "full", 1, "compare");
  ck_assert_int_eq (bl_report_job_html (m, &row, a.c, NULL, a.d, 1, NULL, &err), BL_EIO);
  ck_assert_str_eq (err.where, "output");
  ck_assert_msg (strstr (err.msg, "write failed"), "errors_write section: '%s'", err.msg);
  clearerr (m);
  memset (&err, 0, sizeof err);
  ck_assert_int_eq (bl_report_html_page (m, "t", &row, NULL, 1, &err), BL_EIO);
  ck_assert_str_eq (err.where, "output");
  ck_assert_msg (strstr (err.msg, "write failed"), "errors_write page: '%s'", err.msg);
  fclose (m);
  job_free (&a);
}
END_TEST

/* bl_variance_power on a fit that did not converge (one IRLS step allowed): BL_ENOCONV, and
   OUT still filled (done 0, NAN estimate, a reason); the single-model section says the fit
   failed and draws nothing. */
START_TEST (html_errors_noconv)
{
  job j = { 0 };
  bl_err err = { 0 };
  bl_fit_opts fo;
  bl_power pw;
  bl_batch_row row;
  char *s;
  job_data (&j, 300, "hours");
  bl_fit_opts_init (&fo);
  fo.fam = &bl_family_gamma;
  fo.link = &bl_link_log;
  fo.irls.max_iter = 1;
  j.f = bl_fit_new (j.d, &fo, &err);
  ck_assert_msg (j.f != NULL, "fit: %s", err.msg);
  ck_assert (!bl_fit_stats_get (j.f)->converged);
  ck_assert_int_eq (bl_variance_power (j.f, &pw, &err), BL_ENOCONV);
  ck_assert_str_eq (err.where, "diagnose");
  ck_assert_msg (strstr (err.msg, "did not converge"), "errors_noconv: '%s'", err.msg);
  ck_assert (!pw.done && isnan (pw.estimate) && isnan (pw.intercept) && pw.why[0]);
  row_init (&row, "stuck", 1, "glm");
  s = section (&row, NULL, j.f, j.d);
  ck_assert_msg (strstr (s, "The fit failed") && !strstr (s, "<svg"), "errors_noconv: section");
  free (s);
  job_free (&j);
}
END_TEST

/* The N-th allocation fails, N = 1, 2, ... until the call succeeds: BL_ENOMEM each time
   (AddressSanitizer's leak check covers the leaks).  A build without --enable-alloc-fail
   never fails an allocation, and the loop ends at once. */
START_TEST (html_errors_nomem)
{
  job a = { 0 }, b = { 0 };
  bl_batch_row row;
  int active;
  void *probe;
  job_compare (&a, 120);
  job_single (&b, 250);
  row_init (&row, "nomem", 1, "compare");
  bl_alloc_fail_at (1);                  /* is fault injection built in? */
  probe = bl_malloc (8);
  bl_alloc_fail_at (0);
  active = probe == NULL;
  bl_free (probe);
  for (int which = 0; which < 2; which++)
    for (unsigned long n = 1; n < 1000; n++) {
      bl_err err = { 0 };
      FILE *m = fopen ("/dev/null", "w");
      int st;
      ck_assert_ptr_nonnull (m);
      bl_alloc_fail_at (n);
      st = bl_report_job_html (m, &row, which ? NULL : a.c, which ? b.f : NULL,
                               which ? b.d : a.d, 1, NULL, &err);
      bl_alloc_fail_at (0);
      fclose (m);
      if (st == BL_OK) {
        ck_assert_msg (!active || n > 3, "errors_nomem %d: only %lu allocations", which, n - 1);
        break;
      }
      ck_assert_msg (st == BL_ENOMEM, "errors_nomem %d: allocation %lu gave %d (%s)", which, n,
                     st, err.msg);
    }
  job_free (&a);
  job_free (&b);
}
END_TEST

/* ---------------------------------------------------------------- basics */

/* Names, messages and labels with <, & and " are escaped; no script, no network reference;
   the caution and the plots' axis labels are there. */
START_TEST (html_escaping)
{
  job a = { 0 }, b = { 0 };
  bl_batch_row rows[3];
  char *sec[3], *p, why[256];
  job_compare (&a, 250);
  job_single (&b, 250);
  row_init (&rows[0], "x<y&\"z\"", 1, "compare");
  row_init (&rows[1], "single", 1, "glm");
  snprintf (rows[1].winner, sizeof rows[1].winner, "gamma/log");
  row_init (&rows[2], "bad", 0, "compare");
  snprintf (rows[2].message, sizeof rows[2].message, "<script src=\"http://x\">&</script>");
  sec[0] = section (&rows[0], a.c, NULL, a.d);
  sec[1] = section (&rows[1], NULL, b.f, b.d);
  sec[2] = NULL;                         /* the page writes the row's reason itself */
  p = page (rows, sec, 3);
  ck_assert_msg (wellformed (p, why, sizeof why) == 0, "escaping: %s", why);
  ck_assert_msg (strstr (p, "x&lt;y&amp;&quot;z&quot;") != NULL, "escaping: job name");
  ck_assert_msg (strstr (p, "&lt;script src=&quot;http://x&quot;&gt;&amp;&lt;/script&gt;"),
                 "escaping: message");
  ck_assert_msg (strstr (p, "report &lt;of&gt; &quot;jobs&quot; &amp; more"), "escaping: title");
  ck_assert_msg (strstr (p, "g=c&amp;d"), "escaping: level label 'c&d'");
  ck_assert_msg (!strstr (p, "<script"), "escaping: a script element");
  /* the only "http" is the escaped message's, in the summary and in its section */
  ck_assert_msg (count (p, "http") == 2, "escaping: %zu network references", count (p, "http"));
  free (sec[0]);
  sec[0] = section (&rows[1], NULL, b.f, b.d);
  ck_assert_msg (!strstr (sec[0], "http") && !strstr (sec[1], "http"), "no_network");
  ck_assert_msg (strstr (p, "A ranking is evidence, not proof: validate the chosen model on "
                         "new data before acting on it."), "caution");
  ck_assert_msg (strstr (p, "theoretical normal quantile") && strstr (p, "Pearson residual")
                 && strstr (p, "fitted value, hours") && strstr (p, "profile log-likelihood")
                 && strstr (p, "lambda") && strstr (p, "log mean fitted hours")
                 && strstr (p, "log variance"), "axis labels");
  ck_assert_msg (strstr (p, "id=\"job-x_y__z_\"") && strstr (p, "href=\"#job-x_y__z_\""),
                 "escaping: id of an odd name");
  for (int k = 0; k < 2; k++)
    free (sec[k]);
  free (p);
  job_free (&a);
  job_free (&b);
}
END_TEST

/* A comparison's section: one residual panel per fitted candidate, then the winner's spread
   and quantile plots, the Box-Cox profile and the mean-variance plot. */
START_TEST (html_compare_plots)
{
  job a = { 0 };
  bl_batch_row row;
  size_t nfit = 0;
  char *s;
  job_compare (&a, 300);
  for (size_t i = 0; i < bl_compare_count (a.c); i++)
    nfit += bl_compare_get (a.c, i)->fit && bl_compare_get (a.c, i)->converged;
  row_init (&row, "plots", 1, "compare");
  s = section (&row, a.c, NULL, a.d);
  ck_assert_msg (count (s, "<title>Pearson residuals against") == nfit,
                 "compare_plots: %zu residual panels for %zu fits",
                 count (s, "<title>Pearson residuals against"), nfit);
  ck_assert_msg (count (s, "<svg") == nfit + 4, "compare_plots: %zu svgs", count (s, "<svg"));
  ck_assert_msg (strstr (s, "<title>spread groups of") && strstr (s, "<title>normal quantile")
                 && strstr (s, "<title>Box-Cox profile") && strstr (s, "<title>log variance"),
                 "compare_plots: a plot is missing");
  ck_assert_msg (strstr (s, "class=\"band\""), "compare_plots: no interval band");
  ck_assert_msg (count (s, "<tr") == bl_compare_count (a.c) + 1, "compare_plots: table rows");
  free (s);
  job_free (&a);
}
END_TEST

/* A single model: its coefficient table with every label, and four plots. */
START_TEST (html_single_model)
{
  job b = { 0 };
  bl_batch_row row;
  char *s;
  job_single (&b, 300);
  row_init (&row, "one", 1, "glm");
  s = section (&row, NULL, b.f, b.d);
  for (size_t j = 0; j < bl_design_p (b.d); j++) {
    const char *lab = bl_design_label (b.d, j);
    ck_assert_msg (strchr (lab, '<') || strchr (lab, '&') || strstr (s, lab),
                   "single_model: label '%s'", lab);
  }
  ck_assert_msg (strstr (s, "<table class=\"coef\">") && strstr (s, "95% interval"),
                 "single_model: no coefficient table");
  ck_assert_msg (count (s, "<svg") == 4, "single_model: %zu svgs", count (s, "<svg"));
  ck_assert_msg (!strstr (s, "Box-Cox profile"), "single_model: a profile");
  free (s);
  job_free (&b);
}
END_TEST

/* A failed job: the reason and no plot. */
START_TEST (html_failed_job)
{
  bl_batch_row row;
  char *s, why[256];
  row_init (&row, "gone", 0, "compare");
  snprintf (row.message, sizeof row.message, "data/gone.csv: cannot open: no such file");
  s = section (&row, NULL, NULL, NULL);
  ck_assert_msg (wellformed (s, why, sizeof why) == 0, "failed_job: %s", why);
  ck_assert_msg (strstr (s, "data/gone.csv: cannot open: no such file"), "failed_job: reason");
  ck_assert_msg (strstr (s, ">failed<"), "failed_job: status");
  ck_assert_msg (!strstr (s, "<svg"), "failed_job: a plot");
  free (s);
}
END_TEST

static Suite *
html_suite (void)
{
  Suite *s = suite_create ("html");
  TCase *ref = tcase_create ("reference");
  TCase *idt = tcase_create ("identities");
  TCase *err = tcase_create ("errors");
  TCase *bas = tcase_create ("basics");
  tcase_add_test (ref, html_power_points);
  tcase_add_test (idt, html_page_wellformed_deterministic);
  tcase_add_test (idt, html_point_limits);
  tcase_add_test (err, html_errors_arguments);
  tcase_add_test (err, html_errors_write);
  tcase_add_test (err, html_errors_cancel);
  tcase_add_test (err, html_errors_noconv);
  tcase_add_test (err, html_errors_nomem);
  tcase_add_test (bas, html_escaping);
  tcase_add_test (bas, html_compare_plots);
  tcase_add_test (bas, html_single_model);
  tcase_add_test (bas, html_failed_job);
  tcase_set_timeout (idt, 120);
  tcase_set_timeout (err, 300);
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
  return test_run_suite (html_suite (), 1);
}
