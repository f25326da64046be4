/* check_lsq.c -- the least-squares core and the gaussian IRLS path on NIST StRD.

   Reference: NIST Statistical Reference Datasets, linear least squares regression, all 11
   sets, certified values (tests/data/SOURCES.md).  The accuracy measure is the log relative
   error LRE = -log10(|x - c| / |c|) (-log10 |x| when c = 0). */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include "irls.h"
#include "lsq.h"
#include "testutil.h"

#define MAXN 100
#define MAXP 12

typedef struct nist {
  const char *name;
  int degree;           /* polynomial degree in x, or -1 for all columns (Longley) */
  int intercept;
  size_t n, p;
  double X[MAXP * MAXN];   /* column-major, ld = n */
  double y[MAXN];
  double xraw[8][MAXN];    /* the data columns, for the long double fill */
  double b[MAXP], sd[MAXP];   /* certified */
  double resid_sd;
} nist;

static const struct { const char *name; int degree, intercept; } sets[] = {
  { "Norris", 1, 1 }, { "Pontius", 2, 1 }, { "NoInt1", 1, 0 }, { "NoInt2", 1, 0 },
  { "Filip", 10, 1 }, { "Longley", -1, 1 }, { "Wampler1", 5, 1 }, { "Wampler2", 5, 1 },
  { "Wampler3", 5, 1 }, { "Wampler4", 5, 1 }, { "Wampler5", 5, 1 }
};
#define NSETS (sizeof sets / sizeof sets[0])

static void
load (nist *s, size_t idx)
{
  char path[1024], line[4096], file[64];
  FILE *fp;
  size_t ncol = 0, nb = 0;
  double raw[MAXN][8];
  s->name = sets[idx].name;
  s->degree = sets[idx].degree;
  s->intercept = sets[idx].intercept;
  snprintf (file, sizeof file, "nist/%s.csv", s->name);
  fp = fopen (test_data_path (file, path, sizeof path), "r");
  ck_assert_msg (fp != NULL, "%s: cannot open %s", s->name, path);
  ck_assert (fgets (line, sizeof line, fp) != NULL);
  for (char *c = line; *c; c++)
    if (*c == ',')
      ncol++;
  ncol++;
  s->n = 0;
  while (fgets (line, sizeof line, fp)) {
    char *c = line, *end;
    size_t k = 0;
    if (strspn (line, " \t\r\n") == strlen (line))
      continue;
    for (k = 0; k < ncol; k++) {
      raw[s->n][k] = strtod (c, &end);
      c = end + (*end == ',');
    }
    s->n++;
  }
  fclose (fp);
  /* design */
  s->p = 0;
  if (s->intercept) {
    for (size_t i = 0; i < s->n; i++)
      s->X[i] = 1.0;
    s->p = 1;
  }
  if (s->degree > 0) {
    for (int d = 1; d <= s->degree; d++, s->p++)
      for (size_t i = 0; i < s->n; i++)
        s->X[s->p * s->n + i] = pow (raw[i][1], d);
  } else {
    for (size_t k = 1; k < ncol; k++, s->p++)
      for (size_t i = 0; i < s->n; i++)
        s->X[s->p * s->n + i] = raw[i][k];
  }
  for (size_t i = 0; i < s->n; i++) {
    s->y[i] = raw[i][0];
    for (size_t k = 0; k < ncol; k++)
      s->xraw[k][i] = raw[i][k];
  }
  /* certified values */
  snprintf (file, sizeof file, "nist/%s.certified.txt", s->name);
  fp = fopen (test_data_path (file, path, sizeof path), "r");
  ck_assert_msg (fp != NULL, "%s: cannot open %s", s->name, path);
  while (fgets (line, sizeof line, fp)) {
    char nm[32];
    double e, sdv;
    if (sscanf (line, "param %31s %lf %lf", nm, &e, &sdv) == 3) {
      ck_assert (nb < MAXP);
      s->b[nb] = e;
      s->sd[nb] = sdv;
      nb++;
    } else if (sscanf (line, "residual_sd %lf", &e) == 1) {
      s->resid_sd = e;
    }
  }
  fclose (fp);
  ck_assert_msg (nb == s->p, "%s: %zu certified params, design has %zu", s->name, nb, s->p);
}

static void
mat_fill (const void *ctx, size_t row0, size_t nr, double *out, size_t ld)
{
  const nist *s = ctx;
  for (size_t j = 0; j < s->p; j++)
    memcpy (out + j * ld, s->X + j * s->n + row0, nr * sizeof (double));
}

/* The same columns in long double: powers of x evaluated in long double. */
static void
mat_fill_ld (const void *ctx, size_t row0, size_t nr, long double *out, size_t ld)
{
  const nist *s = ctx;
  size_t j = 0;
  if (s->intercept) {
    for (size_t i = 0; i < nr; i++)
      out[i] = 1.0L;
    j = 1;
  }
  for (int d = 1; j < s->p; j++, d++)
    for (size_t i = 0; i < nr; i++)
      out[i + j * ld] = (s->degree > 0) ? powl ((long double) s->xraw[1][row0 + i], d)
                                         : (long double) s->xraw[d][row0 + i];
}

/* Fit S as gaussian/identity with SOLVER; return the minimum LRE over coefficients and SEs. */
static double
fit_lre (const nist *s, bl_solver solver, double *min_b, double *min_se)
{
  bl_irls_model m = { &bl_family_gaussian, &bl_link_identity, s->n, s->p, s->y, NULL, NULL,
                      mat_fill, mat_fill_ld, s, s->intercept, 0.0, NULL, NULL };
  bl_irls_opts o;
  bl_err err;
  bl_irls_work *ws;
  double mb = 99.0, ms = 99.0, phi;
  bl_irls_opts_init (&o);
  o.solver = solver;
  o.threads = 1;
  ws = bl_irls_work_new (&m, &o, &err);
  ck_assert_ptr_nonnull (ws);
  ck_assert_msg (bl_irls_run (ws, &err) == BL_OK, "%s: %s", s->name, err.msg);
  ck_assert_int_eq (bl_irls_sol (ws)->rank, s->p);
  ck_assert_int_eq (bl_irls_solver (ws), solver);
  phi = bl_irls_deviance (ws) / (double) (s->n - s->p);
  for (size_t j = 0; j < s->p; j++) {
    const double b = bl_irls_beta (ws)[j];
    const double se = sqrt (phi * bl_irls_sol (ws)->cov[j + j * s->p]);
    const double lb = lre (b, s->b[j]), ls = lre (se, s->sd[j]);
    if (lb < mb)
      mb = lb;
    if (ls < ms)
      ms = ls;
  }
  bl_irls_work_free (ws);
  *min_b = mb;
  *min_se = ms;
  return mb < ms ? mb : ms;
}

/* NIST StRD, all 11 sets, certified values (tests/data/SOURCES.md): the extended-precision
   kernel reaches LRE >= 9 on every coefficient and standard error. */
START_TEST (lsq_nist_extended)
{
  nist *s = calloc (1, sizeof *s);
  double mb, ms;
  load (s, (size_t) _i);
  fit_lre (s, BL_SOLVER_EXTENDED, &mb, &ms);
  fprintf (stderr, "NIST %-9s extended: min LRE beta %.1f, se %.1f\n", s->name, mb, ms);
  if (!test_under_valgrind ()) {
    ck_assert_msg (mb >= 9.0, "%s beta: LRE %.2f < 9", s->name, mb);
    ck_assert_msg (ms >= 9.0, "%s se: LRE %.2f < 9", s->name, ms);
  }
  free (s);
}
END_TEST

/* The fast streamed double kernel forced (no fallback) onto the same sets: LRE >= 6. */
START_TEST (lsq_nist_streamed)
{
  nist *s = calloc (1, sizeof *s);
  double mb, ms;
  load (s, (size_t) _i);
  fit_lre (s, BL_SOLVER_STREAMED, &mb, &ms);
  fprintf (stderr, "NIST %-9s streamed: min LRE beta %.1f, se %.1f\n", s->name, mb, ms);
  if (!test_under_valgrind ()) {
    ck_assert_msg (mb >= 6.0, "%s beta: LRE %.2f < 6", s->name, mb);
    ck_assert_msg (ms >= 6.0, "%s se: LRE %.2f < 6", s->name, ms);
  }
  free (s);
}
END_TEST

/* Identity: folding rows block by block gives R with R'R = A'A (Golub & Van Loan 2013,
   6.5.3), checked against the directly accumulated cross products of a random N x Q matrix,
   for Q = 5 (the plain fold) and Q = 40 and 61 (from BL_LSQ_WY_MIN columns on the blocked WY
   fold when the build has an optimized BLAS), in blocks of 64 and of 2048 rows.  One column is
   zero in the first blocks (a reflection with nothing to annihilate).  Then the last column
   is made X b for known b (computed in long double): bl_lsq_solve_tri must return b within
   1e-11 relative (the problem is well conditioned, so only rounding separates them). */
static const size_t fold_q[] = { 5, 40, 61 };

START_TEST (lsq_fold_crossproduct)
{
  enum { N = 3000, QMAX = 61 };
  const size_t Q = fold_q[_i / 2], NB = _i % 2 ? 2048 : 64;
  double *A = malloc (sizeof (double) * N * QMAX), *blk = malloc (sizeof (double) * 2048 * QMAX);
  double R[QMAX * QMAX], b[QMAX];
  unsigned long s = 12345;
  bl_lsq_work *ws = bl_lsq_work_new (Q - 1);
  bl_lsq_sol *sol = bl_lsq_sol_new (Q - 1);
  bl_err err;
  ck_assert (A && blk && ws && sol);
  for (size_t i = 0; i < N * Q; i++) {
    s = s * 6364136223846793005UL + 1442695040888963407UL;
    A[i] = (double) (s >> 11) / 9007199254740992.0 - 0.37;
  }
  for (size_t i = 0; i < 100; i++)
    A[i + 2 * N] = 0.0;
  for (size_t pass = 0; pass < 2; pass++) {
    memset (R, 0, sizeof R);
    for (size_t r0 = 0; r0 < N; r0 += NB) {
      const size_t nb = N - r0 < NB ? N - r0 : NB;
      for (size_t j = 0; j < Q; j++)
        memcpy (blk + j * NB, A + j * N + r0, nb * sizeof (double));
      bl_lsq_fold (R, Q, blk, nb, NB);
    }
    if (pass == 1)
      break;
    for (size_t j = 0; j < Q; j++)
      for (size_t k = j; k < Q; k++) {
        double c = 0.0, r = 0.0, scale = 0.0;
        for (size_t i = 0; i < N; i++) {
          c += A[i + j * N] * A[i + k * N];
          scale += fabs (A[i + j * N] * A[i + k * N]);
        }
        for (size_t i = 0; i < Q; i++)
          r += R[i + j * Q] * R[i + k * Q];
        ck_assert_msg (fabs (c - r) <= 1e-13 * scale, "Q %zu: R'R[%zu,%zu] %.17g vs %.17g", Q,
                       j, k, r, c);
      }
    /* pass 2: y = X b exactly (up to one rounding) in the last column */
    for (size_t j = 0; j + 1 < Q; j++)
      b[j] = 1.0 + 0.5 * (double) j - 0.01 * (double) (j * j);
    for (size_t i = 0; i < N; i++) {
      long double y = 0.0L;
      for (size_t j = 0; j + 1 < Q; j++)
        y += (long double) A[i + j * N] * b[j];
      A[i + (Q - 1) * N] = (double) y;
    }
  }
  ck_assert_int_eq (bl_lsq_solve_tri (ws, R, BL_LSQ_RANK_TOL, sol, &err), BL_OK);
  ck_assert_uint_eq (sol->rank, Q - 1);
  for (size_t j = 0; j + 1 < Q; j++)
    ck_assert_msg (fabs (sol->beta[j] - b[j]) <= 1e-11 * fabs (b[j]), "Q %zu: beta[%zu] %.17g vs %.17g",
                   Q, j, sol->beta[j], b[j]);
  bl_lsq_sol_free (sol);
  bl_lsq_work_free (ws);
  free (blk);
  free (A);
}
END_TEST

/* Rank deficiency: a column that is an exact combination of two others is aliased and named
   by index; the rest are the least-squares fit without it (common practice, no source). */
START_TEST (lsq_rank_deficient)
{
  enum { N = 40 };
  static nist s;
  bl_irls_model m;
  bl_irls_opts o;
  bl_err err;
  bl_irls_work *ws;
  memset (&s, 0, sizeof s);
  s.n = N;
  s.p = 4;
  s.intercept = 1;
  for (size_t i = 0; i < N; i++) {
    const double x1 = 0.3 + 0.71 * (double) i, x2 = sin (1.7 * (double) i);
    s.X[i] = 1.0;
    s.X[N + i] = x1;
    s.X[2 * N + i] = x2;
    s.X[3 * N + i] = 2.5 * x1 - 1.25 * x2;   /* aliased */
    s.y[i] = 1.5 + 0.25 * x1 - 2.0 * x2 + 0.01 * cos (3.1 * (double) i);
  }
  m = (bl_irls_model) { &bl_family_gaussian, &bl_link_identity, N, 4, s.y, NULL, NULL,
                        mat_fill, NULL, &s, 1, 0.0, NULL, NULL };
  bl_irls_opts_init (&o);
  for (int solver = BL_SOLVER_EXTENDED; solver <= BL_SOLVER_STREAMED; solver++) {
    o.solver = (bl_solver) solver;
    ws = bl_irls_work_new (&m, &o, &err);
    ck_assert_int_eq (bl_irls_run (ws, &err), BL_OK);
    ck_assert_int_eq (bl_irls_sol (ws)->rank, 3);
    ck_assert_int_eq (bl_irls_sol (ws)->aliased[3], 1);
    ck_assert_int_eq (bl_irls_sol (ws)->aliased[1], 0);
    ck_assert_msg (fabs (bl_irls_beta (ws)[1] - 0.25) < 1e-3, "solver %d: b1 %g", solver,
                   bl_irls_beta (ws)[1]);
    bl_irls_work_free (ws);
  }
}
END_TEST

/* A fold of a column whose entries are near 1e-160 (their squares subnormal), as the
   rounding residue of a wide sparse block is: R'R = A'A must still hold, with no NaN.
   Identity: R'R = R_old'R_old + A'A (Golub & Van Loan 2013, section 6.5.3); the plain
   reflection gave tau = 2 / (v0^2 + ss) = inf here and a NaN factor (issue 13, class 9). */
START_TEST (lsq_fold_tiny_column)
{
  const size_t q = 3, nb = 4;
  const double scale[3] = { 1e-160, 3e-155, 1e+160 };
  for (size_t c = 0; c < 3; c++) {
    double A[12], A0[12], R[9] = { 0 };
    const double base[12] = { 1.25, -2.5, 0.75, 3.125, 0.5, 1.5, -1.0, 2.25,
                              -0.3, 0.7, 1.1, -0.9 };
    for (size_t k = 0; k < 12; k++)
      A0[k] = A[k] = k < 4 ? base[k] * scale[c] : base[k];
    long double dii[3] = { 0.0L, 0.0L, 0.0L };   /* (A'A)_ii: the scale of entry (i, j) */
    bl_lsq_fold (R, q, A, nb, nb);
    for (size_t i = 0; i < q; i++)
      for (size_t k = 0; k < nb; k++)
        dii[i] += (long double) A0[k + i * nb] * A0[k + i * nb];
    for (size_t i = 0; i < q; i++)
      for (size_t j = 0; j < q; j++) {
        long double rr = 0.0L, aa = 0.0L;
        for (size_t k = 0; k < q; k++)
          rr += (long double) R[k + i * q] * R[k + j * q];
        for (size_t k = 0; k < nb; k++)
          aa += (long double) A0[k + i * nb] * A0[k + j * nb];
        ck_assert_msg (isfinite (R[i + j * q]), "scale %g: R[%zu,%zu] not finite", scale[c],
                       i, j);
        ck_assert_msg (fabsl (rr - aa) <= 1e-13L * sqrtl (dii[i] * dii[j]),
                       "scale %g: (R'R)[%zu,%zu] %Lg vs A'A %Lg", scale[c], i, j, rr, aa);
      }
  }
}
END_TEST

static Suite *
lsq_suite (void)
{
  Suite *s = suite_create ("lsq");
  TCase *ref = tcase_create ("reference"), *id = tcase_create ("identities");
  tcase_add_loop_test (ref, lsq_nist_extended, 0, (int) NSETS);
  tcase_add_loop_test (ref, lsq_nist_streamed, 0, (int) NSETS);
  tcase_add_loop_test (id, lsq_fold_crossproduct, 0, 6);
  tcase_add_test (id, lsq_rank_deficient);
  tcase_add_test (id, lsq_fold_tiny_column);
  suite_add_tcase (s, ref);
  suite_add_tcase (s, id);
  return s;
}

int
main (void)
{
  return test_run_suite (lsq_suite (), 1);
}
