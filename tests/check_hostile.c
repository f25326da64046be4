/* check_hostile.c -- hostile input at the library level: a regular file that changes while
   bl_table_read reads it (a thread appends to it or touches its modification time), and the
   fits that have no estimate or no double to hold their figures (bl_fit_new refuses them with
   BL_EDATA naming the file and the term).  The command-line side of every hostile case is in
   tests/cli/hostile.sh. */
#define _POSIX_C_SOURCE 200809L   /* futimens, UTIME_OMIT, nanosleep */
#include <check.h>
#include <fcntl.h>
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>
#include "ballast.h"
#include "testutil.h"

/* ------------------------------------------------------------------ a file that changes */

/* Rows of the file under change: enough bytes (about 12 MB) that reading takes many
   milliseconds, so the changing thread, which acts every 50 microseconds, acts during the
   read many times over. */
#define CHANGE_ROWS 1000000

enum { CHANGE_APPEND, CHANGE_MTIME };

typedef struct changer {
  const char *path;
  int how;
  pthread_mutex_t mu;
  int stop;                   /* set by the test: the thread ends */
  unsigned long acts;         /* changes made so far */
  int failed;                 /* an I/O call of the thread failed */
} changer;

static int
changer_stopped (changer *c)
{
  int s;
  pthread_mutex_lock (&c->mu);
  s = c->stop;
  pthread_mutex_unlock (&c->mu);
  return s;
}

/* The thread: until told to stop, append one complete record (CHANGE_APPEND), or set the
   modification time to a new value each time, one second later than the last, without
   touching the bytes (CHANGE_MTIME). */
static void *
changer_run (void *arg)
{
  changer *c = arg;
  const struct timespec pause = { 0, 50000 };
  const int fd = open (c->path, c->how == CHANGE_APPEND ? O_WRONLY | O_APPEND : O_WRONLY);
  time_t t = time (NULL) - 100000;
  if (fd < 0) {
    c->failed = 1;
    return NULL;
  }
  while (!changer_stopped (c)) {
    int ok;
    if (c->how == CHANGE_APPEND)
      ok = write (fd, "7,8\n", 4) == 4;
    else {
      struct timespec ts[2];
      ts[0].tv_sec = 0;
      ts[0].tv_nsec = UTIME_OMIT;
      ts[1].tv_sec = t++;
      ts[1].tv_nsec = 0;
      ok = futimens (fd, ts) == 0;
    }
    pthread_mutex_lock (&c->mu);
    c->acts++;
    c->failed |= !ok;
    pthread_mutex_unlock (&c->mu);
    nanosleep (&pause, NULL);
  }
  close (fd);
  return NULL;
}

static unsigned long
changer_acts (changer *c)
{
  unsigned long n;
  pthread_mutex_lock (&c->mu);
  n = c->acts;
  pthread_mutex_unlock (&c->mu);
  return n;
}

/* Write the CHANGE_ROWS-row table to PATH, read it with
   bl_table_read while a thread changes it the way HOW says, and expect BL_EIO "file changed
   while being read" naming PATH, with no table (source.h: the size and modification time are
   checked at open and again at the end; table.h: nothing is kept on failure). */
static void
read_while_changing (const char *path, int how, unsigned threads, const char *what)
{
  test_buf csv = { 0 };
  bl_table_opts opt;
  bl_table *t;
  bl_err err = { 0 };
  changer c;
  pthread_t tid;
  unsigned long before, after;
  test_buf_printf (&csv, "y,x\n");
  for (long i = 0; i < CHANGE_ROWS; i++)
    test_buf_printf (&csv, "%ld,%ld.5\n", (i * 7919) % 100003, i % 1000);
  test_write_file (path, csv.s, csv.len);
  free (csv.s);

  memset (&c, 0, sizeof c);
  c.path = path;
  c.how = how;
  pthread_mutex_init (&c.mu, NULL);
  ck_assert_int_eq (pthread_create (&tid, NULL, changer_run, &c), 0);
  while (changer_acts (&c) == 0 && !c.failed) {     /* the thread is running */
    const struct timespec pause = { 0, 100000 };
    nanosleep (&pause, NULL);
  }
  bl_table_opts_init (&opt);
  opt.threads = threads;
  before = changer_acts (&c);
  t = bl_table_read (path, &opt, &err);
  after = changer_acts (&c);
  pthread_mutex_lock (&c.mu);
  c.stop = 1;
  pthread_mutex_unlock (&c.mu);
  pthread_join (tid, NULL);
  pthread_mutex_destroy (&c.mu);
  ck_assert_msg (!c.failed, "%s: the changing thread's I/O failed", what);
  /* The check means something only when a change fell inside the read. */
  ck_assert_msg (after > before, "%s: no change during the read (%lu, %lu)", what, before,
                 after);
  if (t)
    bl_table_free (t);
  test_expect_fail (t, &err, BL_EIO, path, "file changed while being read", NULL, what);
  ck_assert_str_eq (err.where, path);
  unlink (path);
}

START_TEST (hostile_file_appended)
{
  char dir[512], path[600];
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/grow.csv", dir);
  read_while_changing (path, CHANGE_APPEND, 2, "appended, two threads");
  read_while_changing (path, CHANGE_APPEND, 1, "appended, one thread");
  rmdir (dir);
}
END_TEST

START_TEST (hostile_file_touched)
{
  /* Same size, same bytes, a new modification time: still refused (source.h). */
  char dir[512], path[600];
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/touched.csv", dir);
  read_while_changing (path, CHANGE_MTIME, 2, "modification time changed");
  rmdir (dir);
}
END_TEST

START_TEST (hostile_gzip_appended)
{
  /* A gzip file appended to: the bytes after the member are not another member, so either
     the change check (BL_EIO) or the trailing-bytes check (BL_EDATA, "corrupt gzip stream",
     source.c) refuses the read, whichever comes first; never a table. */
  char dir[512], path[600];
  test_tmpdir (dir, sizeof dir);
  snprintf (path, sizeof path, "%s/grow.csv.gz", dir);
  {
    test_buf csv = { 0 };
    bl_table_opts opt;
    bl_table *t;
    bl_err err = { 0 };
    changer c;
    pthread_t tid;
    size_t zlen;
    unsigned char *z;
    test_buf_printf (&csv, "y,x\n");
    for (long i = 0; i < CHANGE_ROWS; i++)
      test_buf_printf (&csv, "%ld,%ld.5\n", (i * 7919) % 100003, i % 1000);
    z = test_gzip_bytes (csv.s, csv.len, &zlen);
    test_write_file (path, z, zlen);
    free (z);
    free (csv.s);
    memset (&c, 0, sizeof c);
    c.path = path;
    c.how = CHANGE_APPEND;
    pthread_mutex_init (&c.mu, NULL);
    ck_assert_int_eq (pthread_create (&tid, NULL, changer_run, &c), 0);
    while (changer_acts (&c) == 0 && !c.failed) {
      const struct timespec pause = { 0, 100000 };
      nanosleep (&pause, NULL);
    }
    bl_table_opts_init (&opt);
    t = bl_table_read (path, &opt, &err);
    pthread_mutex_lock (&c.mu);
    c.stop = 1;
    pthread_mutex_unlock (&c.mu);
    pthread_join (tid, NULL);
    pthread_mutex_destroy (&c.mu);
    ck_assert_msg (!c.failed, "gzip appended: the changing thread's I/O failed");
    if (t)
      bl_table_free (t);
    ck_assert_msg (t == NULL, "gzip appended: a table was returned");
    ck_assert_msg (err.code == BL_EIO || err.code == BL_EDATA, "gzip appended: code %d (%s)",
                   err.code, err.msg);
    ck_assert_str_eq (err.where, path);
    unlink (path);
  }
  rmdir (dir);
}
END_TEST

/* ------------------------------------------------------------------ fits with no estimate */

/* A poisson fit with one level whose counts are all 0 (y = 0 on the 10 rows of level c): no
   maximum-likelihood estimate exists (Santos Silva & Tenreyro 2010, Economics Letters 107,
   310-312: a regressor that is 0 wherever y > 0), so bl_fit_new refuses with BL_EDATA naming
   the source and the indicator 'g=c' (fit.c, check_mean_boundary), for poisson and the
   negative binomial, and for the gaussian with the log link; the gaussian with the identity
   link has an estimate (the level's mean, 0) and fits. */
START_TEST (hostile_all_zero_level)
{
  static const char *const cat[] = { "g" };
  test_buf csv = { 0 };
  test_job j = { 0 };
  bl_fit_opts fo;
  bl_err err = { 0 };
  bl_fit *f;
  const bl_family *fams[] = { &bl_family_poisson, &bl_family_negbin, &bl_family_gaussian };
  const bl_link *links[] = { &bl_link_log, &bl_link_log, &bl_link_log };
  test_buf_printf (&csv, "y,g,x\n");
  for (int i = 0; i < 30; i++)
    test_buf_printf (&csv, "%d,%c,%d\n", i % 3 == 2 ? 0 : 1 + (i * 7) % 9, "abc"[i % 3], i);
  test_job_csv (&j, &csv, cat, 1, "y", "g, x", NULL, NULL);
  for (size_t k = 0; k < 3; k++) {
    bl_fit_opts_init (&fo);
    fo.fam = fams[k];
    fo.link = links[k];
    f = bl_fit_new (j.d, &fo, &err);
    test_expect_fail (f, &err, BL_EDATA, "mem.csv", "'g=c' cannot be estimated",
                      "no maximum-likelihood estimate exists", bl_family_name (fams[k]));
  }
  bl_fit_opts_init (&fo);
  f = bl_fit_new (j.d, &fo, &err);
  ck_assert_msg (f && bl_fit_stats_get (f)->converged, "gaussian identity: no fit (%s)",
                 err.msg);
  ck_assert_msg (isfinite (bl_fit_beta (f)[2]) && isfinite (bl_fit_se (f)[2]),
                 "gaussian identity: g=c %g (se %g)", bl_fit_beta (f)[2], bl_fit_se (f)[2]);
  bl_fit_free (f);
  test_job_free (&j);
  free (csv.s);
}
END_TEST

/* Response values near 1e-300: the residual sum of squares (near 1e-600) has no double, so
   the standard errors and the log-likelihood cannot be given; the fit is refused with
   BL_EDATA naming the response (fit.c, summarize), not reported as a perfect fit with
   standard errors of 0 (the behaviour before). */
START_TEST (hostile_tiny_response)
{
  test_buf csv = { 0 };
  test_job j = { 0 };
  bl_fit_opts fo;
  bl_err err = { 0 };
  bl_fit *f;
  static const char *const y[] = { "2.5", "3.1", "7.2", "9.9", "17.5", "26.0", "43.1" };
  static const int x[] = { 1, 2, 3, 5, 8, 13, 21 };
  test_buf_printf (&csv, "y,x\n");
  for (int i = 0; i < 7; i++)
    test_buf_printf (&csv, "%se-300,%d\n", y[i], x[i]);
  test_job_csv (&j, &csv, NULL, 0, "y", "x", NULL, NULL);
  bl_fit_opts_init (&fo);
  f = bl_fit_new (j.d, &fo, &err);
  test_expect_fail (f, &err, BL_EDATA, "mem.csv", "'y' is out of range for double precision",
                    "residual sum of squares", "y near 1e-300");
  test_job_free (&j);
  free (csv.s);
}
END_TEST

static Suite *
hostile_suite (void)
{
  Suite *s = suite_create ("hostile");
  TCase *err = tcase_create ("errors");
  tcase_set_timeout (err, 120);
  tcase_add_test (err, hostile_file_appended);
  tcase_add_test (err, hostile_file_touched);
  tcase_add_test (err, hostile_gzip_appended);
  tcase_add_test (err, hostile_all_zero_level);
  tcase_add_test (err, hostile_tiny_response);
  suite_add_tcase (s, err);
  return s;
}

int
main (void)
{
  return test_run_suite (hostile_suite (), 1);
}
