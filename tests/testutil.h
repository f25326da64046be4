/* testutil.h -- helpers shared by the Check suites.

   Every name here starts with "test_" (or is the historical lre), so that a suite may keep
   file-local helpers of its own without a clash.  Helpers that assert do so with Check's
   ck_assert_msg and so may only be called from inside a running test (or its fixture); each
   failure message names what failed. */
#ifndef BALLAST_TESTUTIL_H
#define BALLAST_TESTUTIL_H
#include <stddef.h>
#include <check.h>
#include "design.h"
#include "error.h"
#include "fit.h"
#include "table.h"
#include "terms.h"

/* ---------------------------------------------------------------- numbers */

/* Log relative error of X against the certified C: -log10(|x - c| / |c|), or -log10|x| when
   c == 0 (the NIST StRD convention, McCullagh 2000 / NIST StRD notes).  Capped at 15 for an
   exact match. */
double lre (double x, double c);

/* Relative difference |x - ref| / |ref|.  Infinite or NaN when REF is 0: use it only against
   nonzero references. */
double test_rel (double x, double ref);

/* |x - ref| / |ref|, or the absolute difference |x| when REF is exactly 0. */
double test_rel_abs0 (double x, double ref);

/* |x - ref| / |ref|, or the absolute difference |x - ref| when |REF| <= 1e-300 (so that a
   reference of 0 or a tiny one does not divide by ~0). */
double test_rel_safe (double x, double ref);

/* ---------------------------------------------------------------- files */

/* Path of FILE under the source tree's tests/data (static buffer per call site is not used:
   the result is written into BUF of CAP bytes and returned). */
const char *test_data_path (const char *file, char *buf, size_t cap);

/* Make an empty temporary directory; returns its path in BUF.  Aborts the test on failure. */
const char *test_tmpdir (char *buf, size_t cap);

/* Write LEN bytes of DATA to PATH (created or truncated); asserts success. */
void test_write_file (const char *path, const void *data, size_t len);

/* Gzip LEN bytes of DATA in one member with zlib's deflate (RFC 1952 wrapper via windowBits
   16 + MAX_WBITS, zlib.h).  Returns malloc'ed bytes (caller frees) and their count in
   *OUT_LEN; asserts success. */
unsigned char *test_gzip_bytes (const void *data, size_t len, size_t *out_len);

/* ---------------------------------------------------------------- text buffer */

/* A growable NUL-terminated text buffer (CSV or terms built in a test).  Start from
   "test_buf b = { 0 };"; S is malloc'ed (free (b.s) when done), LEN bytes are used. */
typedef struct test_buf {
  char *s;
  size_t len, cap;
} test_buf;

/* Append printf-style text to B, growing it as needed; asserts on a format error or when
   memory runs out. */
void test_buf_printf (test_buf *b, const char *fmt, ...)
  __attribute__ ((format (printf, 2, 3)));

/* ---------------------------------------------------------------- table, terms, design, fit */

/* Read LEN bytes of CSV text named NAME (for messages) with the default table options and the
   NCAT columns CAT as categorical (CAT may be NULL when NCAT is 0); asserts success. */
bl_table *test_table_mem (const char *csv, size_t len, const char *name,
                          const char *const *cat, size_t ncat);

/* The same for FILE under tests/data (test_data_path). */
bl_table *test_table_file (const char *file, const char *const *cat, size_t ncat);

/* The numeric column NAME of T (every row); asserts that it exists.  Valid until
   bl_table_free (T). */
const double *test_table_col (const bl_table *t, const char *name);

/* Parse the terms TEXT (WHERE names the option for messages); NULL when TEXT is NULL, else
   asserts success. */
bl_terms *test_terms_parse (const char *text, const char *where);

/* Index of the design column labelled LABEL in D; fails the test when there is none. */
size_t test_design_col (const bl_design *d, const char *label);

/* Nonzero when some warning of F contains FRAG. */
int test_fit_has_warning (const bl_fit *f, const char *frag);

/* Everything one fit needs, freed together by test_job_free.  Start from
   "test_job j = { 0 };" and set T (e.g. with test_table_mem); the other members are filled by
   test_job_design* and test_job_fit*. */
typedef struct test_job {
  bl_table *t;
  bl_terms *terms, *off;
  bl_design *d;
  bl_fit *f;
} test_job;

/* Free every member of J (any may be NULL) and zero J. */
void test_job_free (test_job *j);

/* Design options of one test design: prior-weight column, offset terms, variance column
   (each NULL for none) and NO_INTERCEPT (0: with intercept). */
typedef struct test_design_spec {
  const char *weights, *offset, *variance;
  int no_intercept;
} test_design_spec;

/* Build J's design of RESP on J->t (TERMS NULL: intercept only; DS NULL: the default options),
   parsing the terms into J->terms and the offset into J->off.  Returns J->d, or NULL with
   ERR filled when bl_design_new refuses. */
bl_design *test_job_design_spec_try (test_job *j, const char *resp, const char *terms,
                                     const test_design_spec *ds, bl_err *err);

/* The same, asserting success. */
void test_job_design_spec (test_job *j, const char *resp, const char *terms,
                           const test_design_spec *ds);

/* The same with only a prior-weight column WEIGHTS and offset terms OFFSET (either NULL). */
void test_job_design (test_job *j, const char *resp, const char *terms, const char *weights,
                      const char *offset);

/* Read CSV (as "mem.csv", NCAT categorical columns CAT) into J->t, then test_job_design. */
void test_job_csv (test_job *j, const test_buf *csv, const char *const *cat, size_t ncat,
                   const char *resp, const char *terms, const char *weights,
                   const char *offset);

/* Fit J's design with FO into J->f; asserts a converged fit.  WHAT names the case. */
const bl_fit *test_job_fit (test_job *j, const bl_fit_opts *fo, const char *what);

/* Fit J's design with family FAM and link LNK, the other options from BASE (NULL: the
   defaults); asserts a converged fit (the message names FAM/LNK). */
const bl_fit *test_job_fit_glm (test_job *j, const bl_family *fam, const bl_link *lnk,
                                const bl_fit_opts *base);

/* A failed call: F is NULL, ERR has CODE, ERR->where starts with WHERE (NULL: not checked),
   and the message holds FRAG1 and FRAG2 (either may be NULL).  WHAT names the case. */
void test_expect_fail (const void *f, const bl_err *err, int code, const char *where,
                       const char *frag1, const char *frag2, const char *what);

/* ---------------------------------------------------------------- references */

/* Values of KEY in case CAS of tests/reference/remedies_mle.txt (written by
   tests/reference/remedies_mle.py): up to CAP numbers into V ('nan' reads as NAN); returns
   how many.  A missing case or key fails the test. */
size_t test_remedies_ref (const char *cas, const char *key, double *v, size_t cap);

/* The first value of KEY in case CAS of remedies_mle.txt (test_remedies_ref). */
double test_remedies_ref1 (const char *cas, const char *key);

/* ---------------------------------------------------------------- allocation failures */

/* Nonzero when the library was built with --enable-alloc-fail, i.e. bl_alloc_fail_at (1)
   really makes the next allocation fail (probed with one bl_malloc). */
int test_alloc_fail_active (void);

/* One attempt of an allocation-failure loop: run the operation on CTX and keep its result in
   CTX; return BL_OK, or the failure's code with ERR filled. */
typedef int (*test_alloc_run_fn) (void *ctx, bl_err *err);

/* Called after every attempt, with fault injection off again: ST is the attempt's status and
   N the allocation that was made to fail.  It checks the result (ST == BL_OK) or what the
   failure left behind, and frees what the attempt made. */
typedef void (*test_alloc_after_fn) (void *ctx, int st, unsigned long n);

/* The allocation-failure loop (SQLite's malloc tests; DEVELOPERS.md, "Tests"): for
   N = 1, 2, ... the N-th allocation fails and RUN is called.  A failed attempt must return
   BL_ENOMEM with ERR->code BL_ENOMEM and a message that says "memory", and must have reached
   its N-th allocation (an out-of-memory error without one is a bug).  AFTER (may be NULL) runs
   after each attempt.  The loop ends at the first attempt that succeeds without reaching its
   N-th allocation, and returns that N (one more than the operation's allocations); an
   attempt that succeeds although its N-th allocation failed (the failure was recovered from)
   goes on, counted in *RECOVERED (may be NULL), and AFTER must check its result like any
   other.  More than MAX_N attempts fail the test.  Without --enable-alloc-fail nothing runs
   and 0 is returned.  WHAT names the operation in the messages; one line on stderr gives N,
   the recovered count and the time taken.  Leaks are left to AddressSanitizer's leak check
   at exit (--enable-sanitizers) or valgrind. */
unsigned long test_alloc_fail_loop (const char *what, test_alloc_run_fn run,
                                    test_alloc_after_fn after, void *ctx, unsigned long max_n,
                                    unsigned long *recovered);

/* Assert that fits A and B are the same to the last bit (NAN matching NAN): convergence,
   coefficients, standard errors, covariance, fitted means, the summary figures, the variance
   power and the transform's lambda with its interval, and the warnings.  For a fit made
   again from the same design and options (the computation is deterministic). */
void test_fit_same (const bl_fit *a, const bl_fit *b, const char *what);

/* The allocation-failure loop of bl_fit_new (D, FO): a reference fit without injection
   (asserted converged), then test_alloc_fail_loop with every successful attempt asserted
   test_fit_same as the reference.  Returns the loop's N (0 without --enable-alloc-fail). */
unsigned long test_alloc_fail_fit (const char *what, const bl_design *d, const bl_fit_opts *fo,
                                   unsigned long max_n);

/* ---------------------------------------------------------------- running */

/* Nonzero when running under valgrind (long double is computed as double there, so accuracy
   assertions that need extended precision are skipped). */
int test_under_valgrind (void);

/* Run every test of S (Check's CK_NORMAL output) and free the runner; with GSL_HANDLER_OFF
   nonzero, GSL's aborting error handler is switched off first.  Returns EXIT_SUCCESS when no
   test failed, else EXIT_FAILURE: the value for main to return. */
int test_run_suite (Suite *s, int gsl_handler_off);

#endif
