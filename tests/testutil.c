/* testutil.c -- helpers shared by the Check suites. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <zlib.h>
#include <gsl/gsl_errno.h>
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
  j->f = bl_fit_glm (j->d, fo, &err);
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
  j->f = bl_fit_glm (j->d, &fo, &err);
  ck_assert_msg (j->f != NULL, "fit %s/%s: %s: %s", fam->name, lnk->name, err.where, err.msg);
  ck_assert_msg (bl_fit_stats_get (j->f)->converged, "fit %s/%s did not converge: %s",
                 fam->name, lnk->name, bl_fit_status (j->f)->msg);
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
