/* testutil.c -- helpers shared by the Check suites. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <zlib.h>
#include <gsl/gsl_errno.h>
#include "alloc.h"
#include "testutil.h"

#ifndef BL_TEST_SRCDIR
#define BL_TEST_SRCDIR "."
#endif

/* ---------------------------------------------------------------- numbers */

double
test_rel (double x, double ref)
{
  return fabs (x - ref) / fabs (ref);
}

double
test_rel_abs0 (double x, double ref)
{
  return ref == 0.0 ? fabs (x) : fabs (x - ref) / fabs (ref);
}

double
test_rel_safe (double x, double ref)
{
  const double s = fabs (ref) > 1e-300 ? fabs (ref) : 1.0;
  return fabs (x - ref) / s;
}

double
lre (double x, double c)
{
  double r;
  if (!isfinite (x))
    return 0.0;
  r = test_rel_abs0 (x, c);
  if (r == 0.0)
    return 15.0;
  r = -log10 (r);
  return r > 15.0 ? 15.0 : r;
}

/* ---------------------------------------------------------------- files */

const char *
test_data_path (const char *file, char *buf, size_t cap)
{
  const char *top = getenv ("top_srcdir");
  snprintf (buf, cap, "%s/tests/data/%s", top ? top : BL_TEST_SRCDIR, file);
  return buf;
}

const char *
test_tmpdir (char *buf, size_t cap)
{
  const char *base = getenv ("TMPDIR");
  snprintf (buf, cap, "%s/ballast-test-XXXXXX", base ? base : "/tmp");
  if (!mkdtemp (buf)) {
    perror ("mkdtemp");
    abort ();
  }
  return buf;
}

int
test_under_valgrind (void)
{
  const char *p = getenv ("LD_PRELOAD");
  if (getenv ("BALLAST_UNDER_VALGRIND"))
    return 1;
  return p && (strstr (p, "vgpreload") != NULL);
}

void
test_write_file (const char *path, const void *data, size_t len)
{
  FILE *f = fopen (path, "wb");
  ck_assert_msg (f != NULL, "cannot create %s", path);
  ck_assert_uint_eq (fwrite (data, 1, len, f), len);
  ck_assert_int_eq (fclose (f), 0);
}

unsigned char *
test_gzip_bytes (const void *data, size_t len, size_t *out_len)
{
  z_stream zs;
  unsigned char *out;
  size_t cap;
  memset (&zs, 0, sizeof zs);
  ck_assert_int_eq (deflateInit2 (&zs, 6, Z_DEFLATED, 16 + MAX_WBITS, 8, Z_DEFAULT_STRATEGY),
                    Z_OK);
  cap = deflateBound (&zs, (uLong) len) + 64;
  out = malloc (cap);
  ck_assert_ptr_nonnull (out);
  zs.next_in = (Bytef *) data;
  zs.avail_in = (uInt) len;
  zs.next_out = out;
  zs.avail_out = (uInt) cap;
  ck_assert_int_eq (deflate (&zs, Z_FINISH), Z_STREAM_END);
  *out_len = zs.total_out;
  deflateEnd (&zs);
  return out;
}

/* ---------------------------------------------------------------- text buffer */

/* vsnprintf into the free space; when it does not fit, grow to twice what is needed and
   print again (C99 7.19.6.12: the return value is the length the full output needs). */
void
test_buf_printf (test_buf *b, const char *fmt, ...)
{
  va_list ap;
  int need;
  for (;;) {
    va_start (ap, fmt);
    need = vsnprintf (b->s ? b->s + b->len : NULL, b->s ? b->cap - b->len : 0, fmt, ap);
    va_end (ap);
    ck_assert_msg (need >= 0, "test_buf_printf: format error in '%s'", fmt);
    if (b->s && b->len + (size_t) need < b->cap) {
      b->len += (size_t) need;
      return;
    }
    b->cap = (b->cap + (size_t) need + 1) * 2;
    b->s = realloc (b->s, b->cap);
    ck_assert_msg (b->s != NULL, "test_buf_printf: out of memory");
  }
}

/* ---------------------------------------------------------------- table, terms, design, fit */

bl_table *
test_table_mem (const char *csv, size_t len, const char *name, const char *const *cat,
                size_t ncat)
{
  bl_err err = { 0 };
  bl_table_opts to;
  bl_table *t;
  bl_table_opts_init (&to);
  to.categorical = cat;
  to.n_categorical = ncat;
  t = bl_table_read_mem (csv, len, name, &to, &err);
  ck_assert_msg (t != NULL, "read %s: %s: %s", name, err.where, err.msg);
  return t;
}

bl_table *
test_table_file (const char *file, const char *const *cat, size_t ncat)
{
  char path[1024];
  bl_err err = { 0 };
  bl_table_opts to;
  bl_table *t;
  bl_table_opts_init (&to);
  to.categorical = cat;
  to.n_categorical = ncat;
  t = bl_table_read (test_data_path (file, path, sizeof path), &to, &err);
  ck_assert_msg (t != NULL, "read %s: %s: %s", path, err.where, err.msg);
  return t;
}

const double *
test_table_col (const bl_table *t, const char *name)
{
  const long j = bl_table_find (t, name);
  ck_assert_msg (j >= 0, "no column '%s'", name);
  return bl_table_num (t, (size_t) j);
}

bl_terms *
test_terms_parse (const char *text, const char *where)
{
  bl_err err = { 0 };
  bl_terms *t;
  if (!text)
    return NULL;
  t = bl_terms_parse (text, where, &err);
  ck_assert_msg (t != NULL, "parse '%s': %s", text, err.msg);
  return t;
}

size_t
test_design_col (const bl_design *d, const char *label)
{
  for (size_t j = 0; j < bl_design_p (d); j++)
    if (strcmp (bl_design_label (d, j), label) == 0)
      return j;
  ck_abort_msg ("no column '%s' in the design", label);
  return 0;
}

int
test_fit_has_warning (const bl_fit *f, const char *frag)
{
  const bl_warnings *w = bl_fit_warnings (f);
  for (size_t i = 0; i < w->n; i++)
    if (strstr (w->msg[i], frag))
      return 1;
  return 0;
}

void
test_job_free (test_job *j)
{
  bl_fit_free (j->f);
  bl_design_free (j->d);
  bl_terms_free (j->terms);
  bl_terms_free (j->off);
  bl_table_free (j->t);
  memset (j, 0, sizeof *j);
}

bl_design *
test_job_design_spec_try (test_job *j, const char *resp, const char *terms,
                          const test_design_spec *ds, bl_err *err)
{
  bl_design_opts dopt;
  bl_design_opts_init (&dopt);
  j->terms = test_terms_parse (terms, "--terms");
  if (ds) {
    j->off = test_terms_parse (ds->offset, "--offset");
    dopt.weights = ds->weights;
    dopt.offset = j->off;
    dopt.variance = ds->variance;
    dopt.intercept = !ds->no_intercept;
  }
  j->d = bl_design_new (j->t, resp, j->terms, &dopt, err);
  return j->d;
}

void
test_job_design_spec (test_job *j, const char *resp, const char *terms,
                      const test_design_spec *ds)
{
  bl_err err = { 0 };
  ck_assert_msg (test_job_design_spec_try (j, resp, terms, ds, &err) != NULL,
                 "design '%s': %s: %s", terms ? terms : "(intercept)", err.where, err.msg);
}

void
test_job_design (test_job *j, const char *resp, const char *terms, const char *weights,
                 const char *offset)
{
  const test_design_spec ds = { weights, offset, NULL, 0 };
  test_job_design_spec (j, resp, terms, &ds);
}

void
test_job_csv (test_job *j, const test_buf *csv, const char *const *cat, size_t ncat,
              const char *resp, const char *terms, const char *weights, const char *offset)
{
  j->t = test_table_mem (csv->s, csv->len, "mem.csv", cat, ncat);
  test_job_design (j, resp, terms, weights, offset);
}

const bl_fit *
test_job_fit (test_job *j, const bl_fit_opts *fo, const char *what)
{
  bl_err err = { 0 };
  j->f = bl_fit_new (j->d, fo, &err);
  ck_assert_msg (j->f != NULL, "%s: fit: %s: %s", what, err.where, err.msg);
  ck_assert_msg (bl_fit_stats_get (j->f)->converged, "%s: did not converge: %s", what,
                 bl_fit_status (j->f)->msg);
  return j->f;
}

const bl_fit *
test_job_fit_glm (test_job *j, const bl_family *fam, const bl_link *lnk,
                  const bl_fit_opts *base)
{
  bl_err err = { 0 };
  bl_fit_opts fo;
  if (base)
    fo = *base;
  else
    bl_fit_opts_init (&fo);
  fo.fam = fam;
  fo.link = lnk;
  j->f = bl_fit_new (j->d, &fo, &err);
  ck_assert_msg (j->f != NULL, "fit %s/%s: %s: %s", bl_family_name (fam), lnk->name, err.where,
                 err.msg);
  ck_assert_msg (bl_fit_stats_get (j->f)->converged, "fit %s/%s did not converge: %s",
                 bl_family_name (fam), lnk->name, bl_fit_status (j->f)->msg);
  return j->f;
}

void
test_expect_fail (const void *f, const bl_err *err, int code, const char *where,
                  const char *frag1, const char *frag2, const char *what)
{
  ck_assert_msg (f == NULL, "%s: the call succeeded", what);
  ck_assert_msg (err->code == code, "%s: code %d, expected %d (%s: %s)", what, err->code, code,
                 err->where, err->msg);
  ck_assert_msg (!where || strncmp (err->where, where, strlen (where)) == 0,
                 "%s: where '%s', expected '%s'", what, err->where, where);
  ck_assert_msg (!frag1 || strstr (err->msg, frag1) != NULL, "%s: msg '%s' lacks '%s'", what,
                 err->msg, frag1);
  ck_assert_msg (!frag2 || strstr (err->msg, frag2) != NULL, "%s: msg '%s' lacks '%s'", what,
                 err->msg, frag2);
}

/* ---------------------------------------------------------------- references */

size_t
test_remedies_ref (const char *cas, const char *key, double *v, size_t cap)
{
  char path[1024], line[1024];
  FILE *fp = fopen (test_data_path ("../reference/remedies_mle.txt", path, sizeof path), "r");
  int in = 0;
  size_t nv = 0, klen = strlen (key);
  ck_assert_msg (fp != NULL, "open %s", path);
  while (fgets (line, sizeof line, fp)) {
    line[strcspn (line, "\n")] = '\0';
    if (strncmp (line, "case ", 5) == 0) {
      in = strcmp (line + 5, cas) == 0;
    } else if (in && strncmp (line, key, klen) == 0 && line[klen] == ' ') {
      char *s = line + klen, *e;
      while (nv < cap) {
        const double x = strtod (s, &e);
        if (e == s)
          break;
        v[nv++] = x;
        s = e;
      }
      break;
    }
  }
  fclose (fp);
  ck_assert_msg (nv > 0, "remedies_mle.txt: no '%s' in case '%s'", key, cas);
  return nv;
}

double
test_remedies_ref1 (const char *cas, const char *key)
{
  double v;
  test_remedies_ref (cas, key, &v, 1);
  return v;
}

/* ---------------------------------------------------------------- allocation failures */

int
test_alloc_fail_active (void)
{
  void *p;
  int active;
  bl_alloc_fail_at (1);
  p = bl_malloc (8);
  bl_alloc_fail_at (0);
  active = p == NULL;
  bl_free (p);
  return active;
}

unsigned long
test_alloc_fail_loop (const char *what, test_alloc_run_fn run, test_alloc_after_fn after,
                      void *ctx, unsigned long max_n, unsigned long *recovered)
{
  struct timespec t0, t1;
  unsigned long n, rec = 0;
  if (recovered)
    *recovered = 0;
  if (!test_alloc_fail_active ())
    return 0;
  clock_gettime (CLOCK_MONOTONIC, &t0);
  for (n = 1; n <= max_n; n++) {
    bl_err err;
    unsigned long used;
    int st;
    memset (&err, 0, sizeof err);
    bl_alloc_fail_at (n);
    st = run (ctx, &err);
    used = bl_alloc_count ();
    bl_alloc_fail_at (0);
    if (st != BL_OK) {
      ck_assert_msg (st == BL_ENOMEM && err.code == BL_ENOMEM, "%s: allocation %lu made to "
                     "fail: status %d, code %d (%s: %s), expected BL_ENOMEM", what, n, st,
                     err.code, err.where, err.msg);
      ck_assert_msg (strstr (err.msg, "memory") != NULL, "%s: allocation %lu made to fail: "
                     "message '%s' (where '%s') does not say 'memory'", what, n, err.msg,
                     err.where);
      ck_assert_msg (used >= n, "%s: out of memory after %lu allocations, before the %lu-th "
                     "(the one made to fail)", what, used, n);
    }
    if (after)
      after (ctx, st, n);
    if (st == BL_OK) {
      if (used < n)
        break;
      if (rec++ < 5)
        fprintf (stderr, "%s: allocation %lu made to fail, and the operation succeeded "
                 "(with the same result)\n", what, n);
    }
  }
  clock_gettime (CLOCK_MONOTONIC, &t1);
  ck_assert_msg (n <= max_n, "%s: still failing with allocation %lu made to fail", what, max_n);
  fprintf (stderr, "%s: allocation N = 1..%lu made to fail: %lu BL_ENOMEM, %lu recovered "
           "from; success from N = %lu on; %.1f s\n", what, n - 1, n - 1 - rec, rec, n,
           (double) (t1.tv_sec - t0.tv_sec) + 1e-9 * (double) (t1.tv_nsec - t0.tv_nsec));
  if (recovered)
    *recovered = rec;
  return n;
}

/* Bitwise equality of two doubles, NAN matching NAN (a repeated deterministic computation
   gives the same bits; common practice, no source). */
static int
same_double (double x, double y)
{
  return (isnan (x) && isnan (y)) || memcmp (&x, &y, sizeof x) == 0;
}

static void
same_array (const double *x, const double *y, size_t n, const char *name, const char *what)
{
  for (size_t i = 0; i < n; i++)
    ck_assert_msg (same_double (x[i], y[i]), "%s: %s[%zu] %.17g, reference %.17g", what, name,
                   i, x[i], y[i]);
}

void
test_fit_same (const bl_fit *a, const bl_fit *b, const char *what)
{
  const bl_fit_stats *sa = bl_fit_stats_get (a), *sb = bl_fit_stats_get (b);
  const bl_fit_variance_info *va = bl_fit_variance (a), *vb = bl_fit_variance (b);
  const bl_fit_transform_info *ta = bl_fit_transform (a), *tb = bl_fit_transform (b);
  const bl_warnings *wa = bl_fit_warnings (a), *wb = bl_fit_warnings (b);
  const size_t n = sa->n, p = sa->p;
  const double xa[] = { sa->deviance, sa->deviance_null, sa->pearson, sa->phi_used, sa->loglik,
                        sa->aic, sa->bic, sa->loglik_transformed, va->power, va->power_se,
                        ta->lambda, ta->lambda_lo, ta->lambda_hi, ta->lambda_practical };
  const double xb[] = { sb->deviance, sb->deviance_null, sb->pearson, sb->phi_used, sb->loglik,
                        sb->aic, sb->bic, sb->loglik_transformed, vb->power, vb->power_se,
                        tb->lambda, tb->lambda_lo, tb->lambda_hi, tb->lambda_practical };
  ck_assert_msg (sa->converged == sb->converged && n == sb->n && p == sb->p
                 && sa->rank == sb->rank && sa->k == sb->k && sa->iterations == sb->iterations,
                 "%s: converged %d, n %zu, p %zu, rank %zu, k %zu, iterations %zu; reference "
                 "%d, %zu, %zu, %zu, %zu, %zu", what, sa->converged, n, p, sa->rank, sa->k,
                 sa->iterations, sb->converged, sb->n, sb->p, sb->rank, sb->k, sb->iterations);
  same_array (bl_fit_beta (a), bl_fit_beta (b), p, "beta", what);
  same_array (bl_fit_se (a), bl_fit_se (b), p, "se", what);
  same_array (bl_fit_cov (a), bl_fit_cov (b), p * p, "cov", what);
  same_array (bl_fit_mu (a), bl_fit_mu (b), n, "mu", what);
  same_array (xa, xb, sizeof xa / sizeof xa[0], "figure", what);
  ck_assert_msg (strcmp (va->expr, vb->expr) == 0 && ta->nprofile == tb->nprofile,
                 "%s: variance '%s', %zu profile points; reference '%s', %zu", what, va->expr,
                 ta->nprofile, vb->expr, tb->nprofile);
  if (ta->nprofile) {
    same_array (ta->profile_lambda, tb->profile_lambda, ta->nprofile, "profile_lambda", what);
    same_array (ta->profile_loglik, tb->profile_loglik, ta->nprofile, "profile_loglik", what);
  }
  ck_assert_msg (wa->n == wb->n, "%s: %zu warnings, reference %zu", what, wa->n, wb->n);
  for (size_t i = 0; i < wa->n; i++)
    ck_assert_msg (strcmp (wa->msg[i], wb->msg[i]) == 0, "%s: warning '%s', reference '%s'",
                   what, wa->msg[i], wb->msg[i]);
}

typedef struct fit_loop {
  const char *what;
  const bl_design *d;
  const bl_fit_opts *fo;
  const bl_fit *ref;
  bl_fit *f;
} fit_loop;

static int
fit_loop_run (void *ctx, bl_err *err)
{
  fit_loop *c = ctx;
  c->f = bl_fit_new (c->d, c->fo, err);
  return c->f ? BL_OK : err->code;
}

static void
fit_loop_after (void *ctx, int st, unsigned long n)
{
  fit_loop *c = ctx;
  char what[256];
  snprintf (what, sizeof what, "%s, allocation %lu made to fail", c->what, n);
  ck_assert_msg ((st == BL_OK) == (c->f != NULL), "%s: status %d with a fit %p", what, st,
                 (void *) c->f);
  if (c->f)
    test_fit_same (c->f, c->ref, what);
  bl_fit_free (c->f);
  c->f = NULL;
}

unsigned long
test_alloc_fail_fit (const char *what, const bl_design *d, const bl_fit_opts *fo,
                     unsigned long max_n)
{
  bl_err err = { 0 };
  bl_fit *ref = bl_fit_new (d, fo, &err);
  fit_loop c = { what, d, fo, ref, NULL };
  unsigned long n;
  ck_assert_msg (ref != NULL, "%s: reference fit: %s: %s", what, err.where, err.msg);
  ck_assert_msg (bl_fit_stats_get (ref)->converged, "%s: reference fit did not converge: %s",
                 what, bl_fit_status (ref)->msg);
  n = test_alloc_fail_loop (what, fit_loop_run, fit_loop_after, &c, max_n, NULL);
  bl_fit_free (ref);
  return n;
}

/* ---------------------------------------------------------------- running */

int
test_run_suite (Suite *s, int gsl_handler_off)
{
  SRunner *sr;
  int failed;
  if (gsl_handler_off)
    gsl_set_error_handler_off ();
  sr = srunner_create (s);
  srunner_run_all (sr, CK_NORMAL);
  failed = srunner_ntests_failed (sr);
  srunner_free (sr);
  return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
