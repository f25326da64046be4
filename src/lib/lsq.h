/* lsq.h -- the least-squares core: Householder QR of the column-scaled weighted design.

   Two kernels share one finishing step.
   - Extended: the whole weighted matrix [sqrt(w) X | sqrt(w) z] (n x q, q = p + 1) is kept in
     long double and factored by Householder QR with column pivoting.  Used when n q^2 is at
     most BL_LSQ_SMALL_NQ2, which covers every NIST StRD set.
   - Streamed: row blocks are folded, one Householder reflection per column, into a q x q
     upper-triangular R in double (the updating QR of Golub & Van Loan 2013, Matrix
     Computations, 4th ed., section 6.5.3).  Partial factors of fixed row partitions are
     combined in a fixed order, so the result does not depend on the thread count.
   Finishing (both): scale the columns of X to unit norm (rank decisions are then
   scale-free), pivoted Householder QR in long double, rank = number of pivots with
   |r_kk| > tol, solve R11 b = (Q'z)_1 by back substitution, and the unscaled covariance
   factor R11^-1 R11^-T.  No normal equations are formed and X'WX is never inverted. */
#ifndef BALLAST_LSQ_H
#define BALLAST_LSQ_H
#include <stddef.h>
#include "error.h"
#include "fit.h"                  /* bl_solver */
#ifdef __cplusplus
extern "C" {
#endif

#define BL_LSQ_RANK_TOL 1e-11     /* |r_kk| of the unit-norm-scaled R below this: aliased */
#define BL_LSQ_WY_MIN 24          /* q at least this: the streamed fold is blocked (WY) when
                                     the library is built on an optimized BLAS */


/* Fold NB rows of the column-major block A (leading dimension LDA, Q columns) into the
   upper-triangular Q x Q matrix R (column-major, leading dimension Q).  A is overwritten.
   Allocates nothing.  On return R' R = R_old' R_old + A' A (in exact arithmetic).  From
   BL_LSQ_WY_MIN columns on, with an optimized BLAS, the reflections are applied in blocks
   through cblas_dgemm (same reflections, other rounding; the result still depends only on
   the input, not on threads). */
void bl_lsq_fold (double *R, size_t q, double *A, size_t nb, size_t lda);

/* The result of a solve, in the caller's column order (not pivoted). */
typedef struct bl_lsq_sol {
  size_t p, rank;
  double *beta;        /* length p; aliased entries are 0 */
  double *cov;         /* p x p unscaled covariance factor (R'R)^-1, column-major; aliased
                          rows and columns are 0 */
  int *aliased;        /* length p; 1 for a column left out as linearly dependent */
  double rss;          /* squared norm of the weighted residual, sum w (z - X beta)^2 */
} bl_lsq_sol;

/* Allocate a solution for P columns (fields zeroed).  NULL on exhaustion. */
bl_lsq_sol *bl_lsq_sol_new (size_t p);
void bl_lsq_sol_free (bl_lsq_sol *s);

/* Workspace for the finishing step for P columns (q = p + 1).  NULL on exhaustion. */
typedef struct bl_lsq_work bl_lsq_work;
bl_lsq_work *bl_lsq_work_new (size_t p);
void bl_lsq_work_free (bl_lsq_work *ws);

/* Solve from the full long double matrix A (M x Q, column-major, leading dimension LDA; the
   last column is the weighted response).  A is overwritten.  Returns BL_OK, or BL_EDATA when
   the rank is 0 (every column is zero).  Allocates nothing. */
int bl_lsq_solve_full (bl_lsq_work *ws, long double *A, size_t m, size_t lda, double tol,
                       bl_lsq_sol *sol, bl_err *err);

/* Solve from a streamed triangular factor R (Q x Q, column-major, leading dimension Q, as
   bl_lsq_fold leaves it).  R is not changed.  Same returns as bl_lsq_solve_full. */
int bl_lsq_solve_tri (bl_lsq_work *ws, const double *R, double tol, bl_lsq_sol *sol,
                      bl_err *err);

#ifdef __cplusplus
}
#endif
#endif
