/* lsq.c -- Householder QR least squares: the streamed double kernel and the long double
   finishing step (see lsq.h for the design and its sources). */
#include "config.h"
#include <limits.h>
#include <math.h>
#include <string.h>
#if BL_BLAS_OPTIMIZED
#include <gsl/gsl_cblas.h>
#endif
#include "alloc.h"
#include "lsq.h"
#include "rowblock.h"

/* The blocked fold (fold_wy): from BL_LSQ_WY_MIN columns on, panels of WY_PANEL columns,
   the columns right of a panel updated WY_CHUNK at a time, row slices of FOLD_ROWS.  Measured
   on the bench machine (2048 x 51 blocks, OpenBLAS 0.3.21): panels of 8 fold in 0.36 us per
   row against 0.52 for the plain fold (4 to 16 and slices of 256 to 2048 rows tried); a
   product then has at most 8 x 64 x 512 = 2^18 multiply-adds, which OpenBLAS runs on the
   calling thread. */
#ifndef WY_PANEL
#define WY_PANEL 8
#endif
#ifndef WY_CHUNK
#define WY_CHUNK 64
#endif
#ifndef FOLD_ROWS
#define FOLD_ROWS 512
#endif

struct bl_lsq_work {
  size_t p;
  long double *Rl;       /* q x q copy of a streamed factor */
  long double *d;        /* column norms used for scaling, length p */
  long double *Rinv;     /* rank x rank inverse of R11, p x p storage */
  long double *c;        /* Q'z, length p */
  size_t *perm;          /* pivot order, length p */
  size_t *hi, *lo;       /* per column: last row that can be nonzero; per row of R11 and of
                            its inverse: first and last nonzero column (sparse designs) */
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
   level.  The sums use eight interleaved accumulators in a fixed order, so the result is the
   same on every run and thread count; eight, not four, because a sum is a chain of
   dependent additions, and with four the fold waits longer on the adder's latency (measured
   on the bench machine, 2M x 12 on one thread: 0.109 s per iteration with four, 0.103 with
   eight). */
#if defined(__GNUC__) && !defined(__clang__)
#define HOT __attribute__ ((optimize ("O3")))
#else
#define HOT
#endif

HOT static double
dot (const double *restrict a, const double *restrict b, size_t n)
{
  double s[8] = { 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0 };
  const size_t n8 = n - n % 8;
  for (size_t i = 0; i < n8; i += 8)
    for (size_t k = 0; k < 8; k++)
      s[k] += a[i + k] * b[i + k];
  for (size_t i = n8; i < n; i++)
    s[0] += a[i] * b[i];
  return ((s[0] + s[1]) + (s[2] + s[3])) + ((s[4] + s[5]) + (s[6] + s[7]));
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
static void fold_wy (double *R, size_t q, double *A, size_t nb, size_t lda);
static void fold_plain (double *R, size_t q, double *A, size_t nb, size_t lda);

HOT void
bl_lsq_fold (double *R, size_t q, double *A, size_t nb, size_t lda)
{
#if BL_BLAS_OPTIMIZED
  if (q >= BL_LSQ_WY_MIN && nb <= INT_MAX && lda <= INT_MAX) {
    /* Row slices of FOLD_ROWS: each slice's products stay in cache, and are small enough
       that the BLAS runs them on the calling thread (no nested threading). */
    BL_ROWBLOCK_FOR (rb, 0, nb, FOLD_ROWS)
      fold_wy (R, q, A + rb.row0, rb.n, lda);
    return;
  }
#endif
  fold_plain (R, q, A, nb, lda);
}

/*
 * The reflection of one column, in the normalized form u = (1, a / v0), tau' = tau v0^2 =
 * 2 v0^2 / (v0^2 + ||a||^2), which lies in [1, 2] since |v0| = |r| + ||(r, a)|| >= ||a||.
 * SS is ||a||^2 as summed by the caller.  Inside [REFL_SS_MIN, REFL_SS_MAX] the sums are exact
 * to rounding and the plain formulas are used; outside it (entries near 1e-150 or below,
 * whose squares are subnormal or 0, or near 1e+150 and above, whose squares overflow) the
 * column is first scaled by its largest |entry| m, as LAPACK's dlarfg does (Anderson et al.
 * 1999, LAPACK Users' Guide, 3rd ed., section 5.4; Golub & Van Loan 2013, algorithm 5.1.1).
 * Without this a column of rounding residue (about 1e-160, left in the later columns when a
 * wide sparse block has already been reduced to its rank) gives tau = 2 / (v0^2 + ss) = inf
 * and the factor turns to NaN: the one-way layout of 1500 levels over 3000 rows did so.
 * A column is skipped only when every entry is exactly 0.  A is overwritten by u's tail
 * a / v0.  Returns 0 when there is nothing to annihilate, else 1 with *ALPHA (the new r_jj)
 * and *TAUP.
 */
#define REFL_SS_MIN 0x1p-900
#define REFL_SS_MAX 0x1p+900

HOT static int
reflection (double r, double *restrict a, size_t nb, double ss, double *alpha, double *taup)
{
  double v0, m = fabs (r);
  if (ss >= REFL_SS_MIN && ss <= REFL_SS_MAX && m <= 0x1p+450) {
    const double nrm = sqrt (r * r + ss);
    *alpha = (r > 0.0) ? -nrm : nrm;
    v0 = r - *alpha;
    *taup = 2.0 * (v0 * v0) / (v0 * v0 + ss);
    for (size_t t = 0; t < nb; t++)
      a[t] /= v0;
    return 1;
  }
  for (size_t t = 0; t < nb; t++)
    if (fabs (a[t]) > m)
      m = fabs (a[t]);
  if (m == 0.0)                         /* r and every entry 0 */
    return 0;
  {
    double rs = r / m, sss = 0.0, nrm, as, vs;
    int zero = 1;
    for (size_t t = 0; t < nb; t++) {
      const double x = a[t] / m;
      sss += x * x;
      zero &= a[t] == 0.0;
    }
    if (zero)
      return 0;
    nrm = sqrt (rs * rs + sss);
    as = (rs > 0.0) ? -nrm : nrm;
    vs = rs - as;
    *alpha = as * m;
    *taup = 2.0 * (vs * vs) / (vs * vs + sss);
    for (size_t t = 0; t < nb; t++)
      a[t] = (a[t] / m) / vs;
  }
  return 1;
}

HOT static void
fold_plain (double *R, size_t q, double *A, size_t nb, size_t lda)
{
  for (size_t j = 0; j < q; j++) {
    double *const a = A + j * lda;
    const double ss = dot (a, a, nb);
    double r, nrm, alpha, v0, tau;
    if (ss == 0.0 || !(ss >= REFL_SS_MIN && ss <= REFL_SS_MAX)) {
      /* exact zeros, or a column outside the plain formulas' range: the scaled form */
      if (!reflection (R[j + j * q], a, nb, ss, &alpha, &tau))
        continue;                       /* nothing to annihilate */
      for (size_t k = j + 1; k < q; k++) {
        double *const ak = A + k * lda;
        const double s = (R[j + k * q] + dot (a, ak, nb)) * tau;
        R[j + k * q] -= s;
        axpy_minus (ak, a, s, nb);
      }
      R[j + j * q] = alpha;
      continue;
    }
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

#if BL_BLAS_OPTIMIZED
/*
 * The same fold with the reflections of a panel of WY_PANEL columns gathered into one block
 * reflector, so that the update of the columns right of the panel is two matrix products
 * done by the machine's BLAS (Schreiber & Van Loan 1989, "A storage-efficient WY
 * representation for products of Householder transformations", SIAM J. Sci. Stat. Comput.
 * 10(1); LAPACK's dlarft/dlarfb use the same forward form).
 *
 * Reflection j of the fold acts on the stacked vector (row j of R, block column j) and is
 * H_j = I - tau'_j u_j u_j' with u_j = (e_j ; V_j), V_j = a_j / v0 and tau'_j = tau v0^2
 * (the vector of bl_lsq_fold scaled by 1/v0).  V_j is kept in place of a_j, which the
 * reflection annihilates.  For a panel j0 .. j1-1, H_j0 ... H_j1-1 = I - U T U' with T upper
 * triangular: T_ii = tau'_i, T(0:i, i) = -tau'_i T(0:i, 0:i) U(:, 0:i)' u_i, where
 * u_a' u_i = V_a' V_i for a != i (the e parts are distinct unit vectors).  The columns C
 * right of the panel (rows j0 .. j1-1 of R over the block) become (I - U T' U') C:
 *   W = R(j0:j1, k) + V' A_k;  W = T' W;  R(j0:j1, k) -= W;  A_k -= V W.
 */
static void
fold_wy (double *R, size_t q, double *A, size_t nb, size_t lda)
{
  double T[WY_PANEL * WY_PANEL];
  double W[WY_PANEL * WY_CHUNK];
  for (size_t j0 = 0; j0 < q; j0 += WY_PANEL) {
    const size_t j1 = q - j0 < WY_PANEL ? q : j0 + WY_PANEL, b = j1 - j0;
    double *const V = A + j0 * lda;
    /* 1. the panel, one reflection at a time (as bl_lsq_fold), keeping V and T */
    for (size_t j = j0; j < j1; j++) {
      double *const a = A + j * lda;
      const size_t i = j - j0;
      const double ss = dot (a, a, nb);
      double alpha, tau;
      for (size_t t = 0; t < b; t++)
        T[t + i * WY_PANEL] = 0.0;
      if (!reflection (R[j + j * q], a, nb, ss, &alpha, &tau))
        continue;                       /* H_j = I: tau' = 0, V_j = 0 */
      R[j + j * q] = alpha;
      for (size_t k = j + 1; k < j1; k++) {
        double *const ak = A + k * lda;
        const double sk = (R[j + k * q] + dot (a, ak, nb)) * tau;
        R[j + k * q] -= sk;
        axpy_minus (ak, a, sk, nb);
      }
      /* column i of T: -tau' T(0:i, 0:i) (V(:, 0:i)' V_i), then T_ii = tau' */
      for (size_t t = 0; t < i; t++)
        W[t] = dot (V + t * lda, a, nb);
      for (size_t t = 0; t < i; t++) {
        double sum = 0.0;
        for (size_t u = t; u < i; u++)
          sum += T[t + u * WY_PANEL] * W[u];
        T[t + i * WY_PANEL] = -tau * sum;
      }
      T[i + i * WY_PANEL] = tau;
    }
    /* 2. the columns right of the panel, WY_CHUNK at a time */
    for (size_t k0 = j1; k0 < q; k0 += WY_CHUNK) {
      const size_t mc = q - k0 < WY_CHUNK ? q - k0 : WY_CHUNK;
      double *const Ak = A + k0 * lda;
      cblas_dgemm (CblasColMajor, CblasTrans, CblasNoTrans, (int) b, (int) mc, (int) nb, 1.0,
                   V, (int) lda, Ak, (int) lda, 0.0, W, (int) b);
      for (size_t k = 0; k < mc; k++) {
        double *const w = W + k * b;
        const double *const rk = R + j0 + (k0 + k) * q;
        for (size_t t = 0; t < b; t++)
          w[t] += rk[t];
        for (size_t t = b; t-- > 0;) {    /* w = T' w, bottom up (T' is lower triangular) */
          double sum = 0.0;
          for (size_t u = 0; u <= t; u++)
            sum += T[u + t * WY_PANEL] * w[u];
          w[t] = sum;
        }
        for (size_t t = 0; t < b; t++)
          R[j0 + t + (k0 + k) * q] -= w[t];
      }
      cblas_dgemm (CblasColMajor, CblasNoTrans, CblasNoTrans, (int) nb, (int) mc, (int) b,
                   -1.0, V, (int) lda, W, (int) b, 1.0, Ak, (int) lda);
    }
  }
}
#endif

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
  ws->hi = bl_mallocn (q, sizeof *ws->hi);
  ws->lo = bl_mallocn (q, sizeof *ws->lo);
  if (!ws->Rl || !ws->d || !ws->Rinv || !ws->c || !ws->perm || !ws->hi || !ws->lo) {
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
  bl_free (ws->hi);
  bl_free (ws->lo);
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
  /* The last row of each column (and of z) that can be nonzero: a reflection of column k
     acts on rows k .. hi[k] only, and fills the columns right of it down to hi[k].  For a
     dense matrix hi = m - 1 throughout; for an upper-triangular streamed factor of a wide
     sparse design (a one-way layout of 2000 levels) the factorization costs O(q^2) instead
     of O(q^3).  Entries past hi are exact zeros, so the results are the same either way. */
  for (size_t j = 0; j < q; j++) {
    size_t h = 0;
    for (size_t i = m; i-- > 0;)
      if (A[i + j * lda] != 0.0L) {
        h = i;
        break;
      }
    ws->hi[j] = h;
  }
  while (rank < ncand) {
    const size_t k = rank;
    long double *const a = A + k * lda;
    const size_t hk = ws->hi[k] + 1 < m ? ws->hi[k] + 1 : m;   /* rows [k + 1, hk) */
    const long double ss = (k < m && hk > k + 1) ? col_ss (a, k + 1, hk) : 0.0L;
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
      {
        const size_t hkk = ws->hi[k];
        for (size_t j = k; j + 1 < ncand; j++) {
          ws->perm[j] = ws->perm[j + 1];
          ws->hi[j] = ws->hi[j + 1];
        }
        ws->perm[ncand - 1] = pk;
        ws->hi[ncand - 1] = hkk;
      }
      ncand--;
      continue;
    }
    if (ss == 0.0L) {
      /* nothing below the diagonal (an upper-triangular streamed factor): the reflection
         would only change the sign of row k, which leaves the solution, the covariance and
         the residual exactly as they are; skip its O(m q) update */
      rank++;
      continue;
    }
    {
      const long double nrm = sqrtl (r * r + ss);
      const long double alpha = (r > 0.0L) ? -nrm : nrm;
      const long double v0 = r - alpha, tau = 2.0L / (v0 * v0 + ss);
      for (size_t j = k + 1; j < q; j++) {
        long double *const aj = A + j * lda;
        long double s = v0 * aj[k];
        for (size_t i = k + 1; i < hk; i++)
          s += a[i] * aj[i];
        s *= tau;
        aj[k] -= s * v0;
        for (size_t i = k + 1; i < hk; i++)
          aj[i] -= s * a[i];
        if (ws->hi[j] < hk - 1)
          ws->hi[j] = hk - 1;
      }
      a[k] = alpha;
      for (size_t i = k + 1; i < hk; i++)
        a[i] = 0.0L;
    }
    rank++;
  }
  if (rank == 0)
    return bl_fail (err, BL_EDATA, "least squares",
                    "every column of the design is zero: nothing can be estimated");

  /* Back substitution R11 b = c, and R11^-1 column by column (triangular solves).  The
     sums run over the nonzero span of each row of R11 (hi: its last nonzero column), and
     those of the covariance over the nonzero spans of the rows of R11^-1 (lo .. hi): for a
     dense R the full ranges, for the factor of a one-way layout (a dense first row and a
     diagonal) a few terms, so that 2000 indicator columns take seconds, not minutes.  The
     terms left out are exact zeros. */
  for (size_t i = 0; i < rank; i++) {
    size_t h = i;
    for (size_t j = rank; j-- > i + 1;)
      if (A[i + j * lda] != 0.0L) {
        h = j;
        break;
      }
    ws->hi[i] = h;
    ws->c[i] = z[i];
  }
  for (size_t i = rank; i-- > 0;) {
    long double s = ws->c[i];
    for (size_t j = i + 1; j <= ws->hi[i]; j++)
      s -= A[i + j * lda] * ws->c[j];
    ws->c[i] = s / A[i + i * lda];
  }
  for (size_t j = 0; j < rank; j++)
    for (size_t i = j + 1; i-- > 0;) {
      long double s = (i == j) ? 1.0L : 0.0L;
      const size_t kmax = ws->hi[i] < j ? ws->hi[i] : j;
      for (size_t k = i + 1; k <= kmax; k++)
        s -= A[i + k * lda] * ws->Rinv[k + j * rank];
      ws->Rinv[i + j * rank] = s / A[i + i * lda];
    }
  for (size_t i = 0; i < rank; i++) {   /* the nonzero span of row i of R11^-1 */
    size_t l = rank, h = i;
    for (size_t k = i; k < rank; k++)
      if (ws->Rinv[i + k * rank] != 0.0L) {
        if (l == rank)
          l = k;
        h = k;
      }
    ws->lo[i] = l == rank ? i : l;
    ws->hi[i] = h;
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
      /* (R^-1 R^-T)_ij = sum_k Rinv_ik Rinv_jk over both rows' nonzero spans */
      const size_t k0 = ws->lo[i] > ws->lo[j] ? ws->lo[i] : ws->lo[j];
      const size_t k1 = ws->hi[i] < ws->hi[j] ? ws->hi[i] : ws->hi[j];
      for (size_t k = k0; k <= k1; k++)
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
