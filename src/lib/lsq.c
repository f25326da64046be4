/* lsq.c -- Householder QR least squares: the streamed double kernel and the long double
   finishing step (see lsq.h for the design and its sources). */
#include <math.h>
#include <string.h>
#include "alloc.h"
#include "lsq.h"

struct bl_lsq_work {
  size_t p;
  long double *Rl;       /* q x q copy of a streamed factor */
  long double *d;        /* column norms used for scaling, length p */
  long double *Rinv;     /* rank x rank inverse of R11, p x p storage */
  long double *c;        /* Q'z, length p */
  size_t *perm;          /* pivot order, length p */
};

const char *
bl_solver_name (bl_solver s)
{
  switch (s) {
  case BL_SOLVER_EXTENDED: return "qr-extended";
  case BL_SOLVER_STREAMED: return "qr-streamed";
  default: return "auto";
  }
}

/* The hot loops are compiled with full optimization (vectorized) whatever the build's -O
   level; the sums use four interleaved accumulators in a fixed order, so the result is the
   same on every run and thread count. */
#if defined(__GNUC__) && !defined(__clang__)
#define HOT __attribute__ ((optimize ("O3")))
#else
#define HOT
#endif

HOT static double
dot (const double *restrict a, const double *restrict b, size_t n)
{
  double s0 = 0.0, s1 = 0.0, s2 = 0.0, s3 = 0.0;
  const size_t n4 = n - n % 4;
  for (size_t i = 0; i < n4; i += 4) {
    s0 += a[i] * b[i];
    s1 += a[i + 1] * b[i + 1];
    s2 += a[i + 2] * b[i + 2];
    s3 += a[i + 3] * b[i + 3];
  }
  for (size_t i = n4; i < n; i++)
    s0 += a[i] * b[i];
  return (s0 + s1) + (s2 + s3);
}

HOT static void
axpy_minus (double *restrict y, const double *restrict x, double s, size_t n)
{
  for (size_t i = 0; i < n; i++)
    y[i] -= s * x[i];
}

/*
 * One block of the updating QR (Golub & Van Loan 2013, section 6.5.3): for column j the
 * Householder reflection H = I - tau v v' with v = (r_jj - alpha, a_j), alpha = -sign(r_jj)
 * ||(r_jj, a_j)||, tau = 2 / v'v maps (r_jj, a_j) to (alpha, 0) and is applied to the rest of
 * row j of R and the rest of the block.
 */
HOT void
bl_lsq_fold (double *R, size_t q, double *A, size_t nb, size_t lda)
{
  for (size_t j = 0; j < q; j++) {
    double *const a = A + j * lda;
    const double ss = dot (a, a, nb);
    double r, nrm, alpha, v0, tau;
    if (ss == 0.0)
      continue;                         /* nothing to annihilate */
    r = R[j + j * q];
    nrm = sqrt (r * r + ss);
    alpha = (r > 0.0) ? -nrm : nrm;
    v0 = r - alpha;
    tau = 2.0 / (v0 * v0 + ss);
    for (size_t k = j + 1; k < q; k++) {
      double *const ak = A + k * lda;
      const double s = (v0 * R[j + k * q] + dot (a, ak, nb)) * tau;
      R[j + k * q] -= s * v0;
      axpy_minus (ak, a, s, nb);
    }
    R[j + j * q] = alpha;
  }
}

bl_lsq_sol *
bl_lsq_sol_new (size_t p)
{
  bl_lsq_sol *s = bl_calloc (1, sizeof *s);
  if (!s)
    return NULL;
  s->p = p;
  s->beta = bl_calloc (p, sizeof *s->beta);
  s->cov = bl_calloc (p * p, sizeof *s->cov);
  s->aliased = bl_calloc (p, sizeof *s->aliased);
  if (!s->beta || !s->cov || !s->aliased) {
    bl_lsq_sol_free (s);
    return NULL;
  }
  return s;
}

void
bl_lsq_sol_free (bl_lsq_sol *s)
{
  if (!s)
    return;
  bl_free (s->beta);
  bl_free (s->cov);
  bl_free (s->aliased);
  bl_free (s);
}

bl_lsq_work *
bl_lsq_work_new (size_t p)
{
  const size_t q = p + 1;
  bl_lsq_work *ws = bl_calloc (1, sizeof *ws);
  if (!ws)
    return NULL;
  ws->p = p;
  ws->Rl = bl_mallocn (q * q, sizeof *ws->Rl);
  ws->d = bl_mallocn (q, sizeof *ws->d);
  ws->Rinv = bl_mallocn (q * q, sizeof *ws->Rinv);
  ws->c = bl_mallocn (q, sizeof *ws->c);
  ws->perm = bl_mallocn (q, sizeof *ws->perm);
  if (!ws->Rl || !ws->d || !ws->Rinv || !ws->c || !ws->perm) {
    bl_lsq_work_free (ws);
    return NULL;
  }
  return ws;
}

void
bl_lsq_work_free (bl_lsq_work *ws)
{
  if (!ws)
    return;
  bl_free (ws->Rl);
  bl_free (ws->d);
  bl_free (ws->Rinv);
  bl_free (ws->c);
  bl_free (ws->perm);
  bl_free (ws);
}

static long double
col_ss (const long double *a, size_t from, size_t to)
{
  long double s = 0.0L;
  for (size_t i = from; i < to; i++)
    s += a[i] * a[i];
  return s;
}

/*
 * Householder QR of the M x Q long double matrix A with limited column pivoting: columns are
 * taken in the caller's order, and a column whose remaining norm (|r_kk|, after the columns
 * before it have been projected out) is at most TOL is moved to the end and marked aliased,
 * so that it is always a later term that is reported as a combination of earlier ones (the
 * strategy of LINPACK's dqrdc as modified for regression; Dongarra, Bunch, Moler & Stewart
 * 1979, LINPACK Users' Guide, ch. 9).  The last column (the weighted response) is never
 * pivoted and is transformed along, giving Q'z.  Columns are first scaled to unit norm, so
 * the test is independent of the units of each term.
 */
static int
solve_ld (bl_lsq_work *ws, long double *A, size_t m, size_t lda, double tol, bl_lsq_sol *sol,
          bl_err *err)
{
  const size_t p = ws->p, q = p + 1;
  long double *const z = A + p * lda;
  size_t rank = 0, ncand = p;

  for (size_t j = 0; j < p; j++) {
    const long double s = sqrtl (col_ss (A + j * lda, 0, m));
    ws->d[j] = s;
    if (s > 0.0L)
      for (size_t i = 0; i < m; i++)
        A[i + j * lda] /= s;
    ws->perm[j] = j;
  }
  while (rank < ncand) {
    const size_t k = rank;
    long double *const a = A + k * lda;
    const long double ss = (k < m) ? col_ss (a, k + 1, m) : 0.0L;
    const long double r = (k < m) ? a[k] : 0.0L;
    if (k >= m || !(sqrtl (r * r + ss) > (long double) tol)) {
      /* numerically dependent on the columns before it: rotate it to the end */
      const size_t pk = ws->perm[k];
      for (size_t i = 0; i < m; i++) {
        const long double x = a[i];
        for (size_t j = k; j + 1 < ncand; j++)
          A[i + j * lda] = A[i + (j + 1) * lda];
        A[i + (ncand - 1) * lda] = x;
      }
      for (size_t j = k; j + 1 < ncand; j++)
        ws->perm[j] = ws->perm[j + 1];
      ws->perm[ncand - 1] = pk;
      ncand--;
      continue;
    }
    {
      const long double nrm = sqrtl (r * r + ss);
      const long double alpha = (r > 0.0L) ? -nrm : nrm;
      const long double v0 = r - alpha, tau = 2.0L / (v0 * v0 + ss);
      for (size_t j = k + 1; j < q; j++) {
        long double *const aj = A + j * lda;
        long double s = v0 * aj[k];
        for (size_t i = k + 1; i < m; i++)
          s += a[i] * aj[i];
        s *= tau;
        aj[k] -= s * v0;
        for (size_t i = k + 1; i < m; i++)
          aj[i] -= s * a[i];
      }
      a[k] = alpha;
      for (size_t i = k + 1; i < m; i++)
        a[i] = 0.0L;
    }
    rank++;
  }
  if (rank == 0)
    return bl_fail (err, BL_EDATA, "least squares",
                    "every column of the design is zero: nothing can be estimated");

  /* Back substitution R11 b = c, and R11^-1 column by column (triangular solves). */
  for (size_t i = 0; i < rank; i++)
    ws->c[i] = z[i];
  for (size_t i = rank; i-- > 0;) {
    long double s = ws->c[i];
    for (size_t j = i + 1; j < rank; j++)
      s -= A[i + j * lda] * ws->c[j];
    ws->c[i] = s / A[i + i * lda];
  }
  for (size_t j = 0; j < rank; j++)
    for (size_t i = j + 1; i-- > 0;) {
      long double s = (i == j) ? 1.0L : 0.0L;
      for (size_t k = i + 1; k <= j; k++)
        s -= A[i + k * lda] * ws->Rinv[k + j * rank];
      ws->Rinv[i + j * rank] = s / A[i + i * lda];
    }

  sol->rank = rank;
  memset (sol->beta, 0, p * sizeof *sol->beta);
  memset (sol->cov, 0, p * p * sizeof *sol->cov);
  for (size_t j = 0; j < p; j++)
    sol->aliased[j] = 1;
  for (size_t i = 0; i < rank; i++) {
    const size_t pi = ws->perm[i];
    sol->aliased[pi] = 0;
    sol->beta[pi] = (double) (ws->c[i] / ws->d[pi]);
    for (size_t j = 0; j < rank; j++) {
      const size_t pj = ws->perm[j];
      long double s = 0.0L;
      /* (R^-1 R^-T)_ij = sum_k Rinv_ik Rinv_jk, k >= max(i, j) */
      for (size_t k = (i > j ? i : j); k < rank; k++)
        s += ws->Rinv[i + k * rank] * ws->Rinv[j + k * rank];
      sol->cov[pi + pj * p] = (double) (s / (ws->d[pi] * ws->d[pj]));
    }
  }
  sol->rss = (double) col_ss (z, rank, m);
  return BL_OK;
}

int
bl_lsq_solve_full (bl_lsq_work *ws, long double *A, size_t m, size_t lda, double tol,
                   bl_lsq_sol *sol, bl_err *err)
{
  return solve_ld (ws, A, m, lda, tol, sol, err);
}

int
bl_lsq_solve_tri (bl_lsq_work *ws, const double *R, double tol, bl_lsq_sol *sol, bl_err *err)
{
  const size_t q = ws->p + 1;
  for (size_t j = 0; j < q; j++)
    for (size_t i = 0; i < q; i++)
      ws->Rl[i + j * q] = (i <= j) ? (long double) R[i + j * q] : 0.0L;
  return solve_ld (ws, ws->Rl, q, q, tol, sol, err);
}
