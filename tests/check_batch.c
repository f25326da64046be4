/* check_batch.c -- ballast run from C (batch.c through batch.h): a two-job spec run into an
   output folder, and out of memory at every allocation of that run.

   The checks, each with its source beside it:
   - basics: a run writes the files batch.h lists (JOB/result.json, JOB/residuals.csv,
     summary.json, summary.csv, index.html) and nothing else, and a second run into a new
     folder writes the same bytes (doc/cli.md: the results depend only on the spec and the
     data);
   - errors: the N-th allocation fails for N = 1, 2, ... until the run succeeds
     (DEVELOPERS.md, "Tests"; SQLite's malloc tests).  Each failed run returns BL_ENOMEM with
     a message about memory and nothing else (never a job merely marked failed), leaks
     nothing (the sanitizer build's leak check at exit), and leaves no partial output: no
     temporary file, and every file under a final name is byte for byte the file of the run
     without injection (batch.h: written under a temporary name and renamed, so a file that
     exists is complete).  The first run that succeeds writes exactly the files of the run
     without injection, byte for byte (so the coefficients in result.json are the same to
     the last digit of %.17g), with the same summary rows. */
#define _GNU_SOURCE 1            /* strdup */
#include <check.h>
#include <dirent.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#include "job.h"
#include "testutil.h"

/* ---------------------------------------------------------------- helpers */

#define MAX_FILES 32

/* The regular files under a folder, by path relative to it, with their bytes. */
typedef struct tree {
  size_t n;
  char *path[MAX_FILES];
  char *data[MAX_FILES];
  size_t len[MAX_FILES];
} tree;

static void
tree_free (tree *t)
{
  for (size_t i = 0; i < t->n; i++) {
    free (t->path[i]);
    free (t->data[i]);
  }
  memset (t, 0, sizeof *t);
}

/* The whole of the file PATH, malloc'ed, and its length in *LEN. */
static char *
read_all (const char *path, size_t *len)
{
  FILE *f = fopen (path, "rb");
  char *buf = NULL;
  size_t cap = 0, n = 0;
  ck_assert_msg (f != NULL, "cannot open %s", path);
  for (;;) {
    if (n == cap) {
      cap = cap ? 2 * cap : 65536;
      buf = realloc (buf, cap);
      ck_assert_ptr_nonnull (buf);
    }
    {
      const size_t got = fread (buf + n, 1, cap - n, f);
      n += got;
      if (got == 0)
        break;
    }
  }
  ck_assert_msg (!ferror (f), "cannot read %s", path);
  fclose (f);
  *len = n;
  return buf;
}

/* Add every regular file under DIR/REL (REL "" for DIR itself) to T, in readdir order; a
   folder is walked, anything else fails the test. */
static void
tree_read (tree *t, const char *dir, const char *rel)
{
  char full[1200];
  DIR *d;
  struct dirent *de;
  snprintf (full, sizeof full, "%s%s%s", dir, rel[0] ? "/" : "", rel);
  d = opendir (full);
  ck_assert_msg (d != NULL, "cannot open the folder %s", full);
  while ((de = readdir (d))) {
    char sub[600], path[1800];
    struct stat sb;
    if (!strcmp (de->d_name, ".") || !strcmp (de->d_name, ".."))
      continue;
    snprintf (sub, sizeof sub, "%s%s%s", rel, rel[0] ? "/" : "", de->d_name);
    snprintf (path, sizeof path, "%s/%s", dir, sub);
    ck_assert_msg (lstat (path, &sb) == 0, "cannot stat %s", path);
    if (S_ISDIR (sb.st_mode)) {
      tree_read (t, dir, sub);
      continue;
    }
    ck_assert_msg (S_ISREG (sb.st_mode), "%s is neither a file nor a folder", path);
    ck_assert_msg (t->n < MAX_FILES, "more than %d files under %s", MAX_FILES, dir);
    t->path[t->n] = strdup (sub);
    ck_assert_ptr_nonnull (t->path[t->n]);
    t->data[t->n] = read_all (path, &t->len[t->n]);
    t->n++;
  }
  closedir (d);
}

/* The index of REL in T, or -1. */
static long
tree_find (const tree *t, const char *rel)
{
  for (size_t i = 0; i < t->n; i++)
    if (!strcmp (t->path[i], rel))
      return (long) i;
  return -1;
}

/* Remove DIR and everything under it (files and folders only, as tree_read allows). */
static void
remove_tree (const char *dir)
{
  DIR *d = opendir (dir);
  struct dirent *de;
  if (!d)
    return;
  while ((de = readdir (d))) {
    char path[1200];
    struct stat sb;
    if (!strcmp (de->d_name, ".") || !strcmp (de->d_name, ".."))
      continue;
    snprintf (path, sizeof path, "%s/%s", dir, de->d_name);
    if (lstat (path, &sb) == 0 && S_ISDIR (sb.st_mode))
      remove_tree (path);
    else
      unlink (path);
  }
  closedir (d);
  ck_assert_msg (rmdir (dir) == 0, "cannot remove %s", dir);
}

/* Every file of GOT is the file of REF with the same path, byte for byte, and none is a
   temporary (a name starting with '.': batch.c's write_atomic).  With ALL, GOT also holds
   every file of REF.  WHAT names the case. */
static void
tree_check (const tree *got, const tree *ref, int all, const char *what)
{
  for (size_t i = 0; i < got->n; i++) {
    const char *base = strrchr (got->path[i], '/');
    const long k = tree_find (ref, got->path[i]);
    base = base ? base + 1 : got->path[i];
    ck_assert_msg (base[0] != '.', "%s: temporary file '%s' left behind", what, got->path[i]);
    ck_assert_msg (k >= 0, "%s: '%s' is not a file of the run without injection", what,
                   got->path[i]);
    ck_assert_msg (got->len[i] == ref->len[k]
                   && memcmp (got->data[i], ref->data[k], got->len[i]) == 0,
                   "%s: '%s' (%zu bytes) differs from the run without injection (%zu bytes)",
                   what, got->path[i], got->len[i], ref->len[k]);
  }
  if (all)
    ck_assert_msg (got->n == ref->n, "%s: %zu files, the run without injection wrote %zu",
                   what, got->n, ref->n);
}

/* Summary rows: the same job, status, method, winner, n and message, and AIC, delta and
   spread ratio to the bit (NAN matching NAN). */
static int
same_num (double x, double y)
{
  return (isnan (x) && isnan (y)) || memcmp (&x, &y, sizeof x) == 0;
}

static void
rows_check (const bl_batch_row *got, const bl_batch_row *ref, size_t n, const char *what)
{
  for (size_t i = 0; i < n; i++)
    ck_assert_msg (!strcmp (got[i].job, ref[i].job) && got[i].ok == ref[i].ok
                   && !strcmp (got[i].method, ref[i].method)
                   && !strcmp (got[i].winner, ref[i].winner) && got[i].n == ref[i].n
                   && !strcmp (got[i].message, ref[i].message)
                   && same_num (got[i].aic, ref[i].aic) && same_num (got[i].delta, ref[i].delta)
                   && same_num (got[i].spread_ratio, ref[i].spread_ratio),
                   "%s: summary row %zu: job '%s' ok %d winner '%s' aic %.17g message '%s'; "
                   "reference '%s' %d '%s' %.17g '%s'", what, i, got[i].job, got[i].ok,
                   got[i].winner, got[i].aic, got[i].message, ref[i].job, ref[i].ok,
                   ref[i].winner, ref[i].aic, ref[i].message);
}

/* The run of the tests: a temporary folder with the data (30 rows, invented: y grows with x
   and its spread with the mean, so both jobs fit) and a spec of two jobs, a comparison of
   two candidates without cross-validation and one gamma GLM. */
typedef struct run {
  char dir[512];
  bl_spec *spec;
  bl_batch_opts bo;
  bl_batch_row rows[2];
} run;

static void
run_init (run *r)
{
  static const char text[] =
    "[defaults]\ndata = d.csv\nresponse = y\nterms = x\n"
    "[job cmp]\ncandidates = ls, gam-log\nfolds = 0\n"
    "[job gam]\nfamily = gamma\nlink = log\n";
  char path[700];
  test_buf csv = { 0 };
  bl_err err = { 0 };
  memset (r, 0, sizeof *r);
  test_tmpdir (r->dir, sizeof r->dir);
  test_buf_printf (&csv, "y,x\n");
  for (int i = 0; i < 30; i++) {
    const double x = 1.0 + 0.3 * i, mu = 2.0 + 1.5 * x;
    test_buf_printf (&csv, "%.6f,%.2f\n", mu * (1.0 + 0.3 * sin (2.7 * i + 0.4)), x);
  }
  snprintf (path, sizeof path, "%s/d.csv", r->dir);
  test_write_file (path, csv.s, csv.len);
  free (csv.s);
  r->spec = bl_spec_read_mem (text, strlen (text), "nomem.spec", r->dir, &err);
  ck_assert_msg (r->spec != NULL, "spec: %s: %s", err.where, err.msg);
  ck_assert_uint_eq (bl_spec_njobs (r->spec), 2);
  bl_batch_opts_init (&r->bo);
}

static void
run_free (run *r)
{
  bl_spec_free (r->spec);
  remove_tree (r->dir);
}

/* Run R's spec into R->dir/SUB; BL_OK asserted, and the files read into T. */
static void
run_into (run *r, const char *sub, bl_batch_row *rows, tree *t)
{
  char out[700];
  bl_err err = { 0 };
  int st;
  snprintf (out, sizeof out, "%s/%s", r->dir, sub);
  st = bl_batch_run (r->spec, out, &r->bo, rows, &err);
  ck_assert_msg (st == BL_OK, "run into %s: %d (%s: %s)", sub, st, err.where, err.msg);
  tree_read (t, out, "");
}

/* ---------------------------------------------------------------- basics */

/* The files of batch.h, each non-empty, both jobs done (doc/cli.md, "Report folder"), and
   the same bytes from a second run (doc/cli.md: a job's results depend only on the spec,
   the data and its seed). */
START_TEST (batch_files)
{
  static const char *const want[] = { "cmp/result.json", "cmp/residuals.csv",
                                      "gam/result.json", "gam/residuals.csv", "summary.json",
                                      "summary.csv", "index.html" };
  run r;
  tree t1 = { 0 }, t2 = { 0 };
  bl_batch_row rows2[2];
  run_init (&r);
  run_into (&r, "out1", r.rows, &t1);
  for (size_t i = 0; i < 2; i++)
    ck_assert_msg (r.rows[i].ok, "job %s: %s", r.rows[i].job, r.rows[i].message);
  ck_assert_str_eq (r.rows[0].method, "compare");
  ck_assert_str_eq (r.rows[1].winner, "gamma/log");
  ck_assert_uint_eq (t1.n, sizeof want / sizeof want[0]);
  for (size_t i = 0; i < sizeof want / sizeof want[0]; i++) {
    const long k = tree_find (&t1, want[i]);
    ck_assert_msg (k >= 0, "no %s", want[i]);
    ck_assert_msg (t1.len[k] > 0, "%s is empty", want[i]);
  }
  run_into (&r, "out2", rows2, &t2);
  tree_check (&t2, &t1, 1, "second run");
  rows_check (rows2, r.rows, 2, "second run");
  tree_free (&t1);
  tree_free (&t2);
  run_free (&r);
}
END_TEST

/* ---------------------------------------------------------------- errors */

typedef struct nomem_ctx {
  run *r;
  char out[700];
  const tree *ref;
  bl_batch_row rows[2];
} nomem_ctx;

static int
nomem_run (void *ctx, bl_err *err)
{
  nomem_ctx *c = ctx;
  return bl_batch_run (c->r->spec, c->out, &c->r->bo, c->rows, err);
}

/* After each attempt: what is in the output folder (complete files only, or all of them on
   success), then remove it for the next attempt. */
static void
nomem_after (void *ctx, int st, unsigned long n)
{
  nomem_ctx *c = ctx;
  char what[128];
  tree t = { 0 };
  snprintf (what, sizeof what, "allocation %lu made to fail (status %d)", n, st);
  if (access (c->out, F_OK) != 0) {        /* failed before the folder was made */
    ck_assert_msg (st != BL_OK, "%s: no output folder", what);
    return;
  }
  tree_read (&t, c->out, "");
  tree_check (&t, c->ref, st == BL_OK, what);
  if (st == BL_OK)
    rows_check (c->rows, c->r->rows, 2, what);
  tree_free (&t);
  remove_tree (c->out);
}

START_TEST (batch_error_alloc_failure)
{
  run r;
  tree ref = { 0 };
  nomem_ctx c;
  unsigned long n;
  run_init (&r);
  run_into (&r, "ref", r.rows, &ref);
  memset (&c, 0, sizeof c);
  c.r = &r;
  c.ref = &ref;
  snprintf (c.out, sizeof c.out, "%s/out", r.dir);
  n = test_alloc_fail_loop ("batch nomem: two-job run", nomem_run, nomem_after, &c, 1000000,
                            NULL);
  /* at least the two designs and fits (each allocates a dozen tables: fit.c) */
  ck_assert_msg (n == 0 || n > 24, "batch nomem: the loop ended at N = %lu", n);
  tree_free (&ref);
  run_free (&r);
}
END_TEST

static Suite *
batch_suite (void)
{
  Suite *s = suite_create ("batch");
  TCase *err = tcase_create ("errors");
  TCase *bas = tcase_create ("basics");
  tcase_add_test (err, batch_error_alloc_failure);
  tcase_add_test (bas, batch_files);
  tcase_set_timeout (err, 300);
  tcase_set_timeout (bas, 120);
  suite_add_tcase (s, err);
  suite_add_tcase (s, bas);
  return s;
}

int
main (void)
{
  return test_run_suite (batch_suite (), 1);
}
