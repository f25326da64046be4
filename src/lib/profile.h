/* profile.h -- profile likelihoods of one parameter: a coarse grid scan, the global bracket
   around its best point, Brent's method for the maximum (GSL's gsl_min underneath), and the
   ends of the likelihood-ratio interval, the roots of l(x) = l_max - chi2_1(level) / 2 (GSL's
   gsl_root underneath; Box & Cox 1964, J. R. Statist. Soc. B 26, 211-252, section 4).

   The engines that estimate a parameter by its profile (the variance power of fit_wls.c,
   Box-Cox lambda in fit_transform.c, the Tweedie power and dispersion in fit_tweedie.c) call
   these with their own tolerances and caps, named in each engine; the defaults below name
   the values they use.  Internal: not installed.  Allocates nothing through alloc.h (GSL's
   solvers use its own malloc). */
#ifndef BALLAST_PROFILE_H
#define BALLAST_PROFILE_H
#include <stddef.h>
#include "error.h"

/* A profile log-likelihood at X, with its caller's context ARG: -HUGE_VAL where it does not
   exist (the search then avoids X). */
typedef double (*bl_profile_fn) (double x, void *arg);

/* When a search stops: after MAX_ITER iterations, or when the bracket [a, b] satisfies
   |b - a| < EPSABS + EPSREL min(|a|, |b|) (gsl_min_test_interval, gsl_root_test_interval),
   or, with STALL set, after an iteration that left both ends of the bracket where they were.
   GSL's Brent steps are at least sqrt(DBL_EPSILON) |x| long, so once |x| is above about
   EPSABS / 1.5e-8 an absolute tolerance alone is out of reach; the stall test ends the search
   where it can make no more progress (and x no longer changes). */
typedef struct bl_profile_tol {
  double epsabs, epsrel;
  size_t max_iter;
  int stall;                      /* nonzero: stop when an iteration leaves the bracket as is */
} bl_profile_tol;

#define BL_PROFILE_MAX_ITER 200   /* the cap of the searches that have no reason for another */
#define BL_PROFILE_LEVEL 0.95     /* the level of a profile interval */

/* Evaluate F at GRID[k] = LO + STEP k for k < NG into VAL[k].  With STATUS not NULL the scan
   stops after the first point at which *STATUS (the caller's error slot, which F sets) is no
   longer BL_OK.  Returns the index of the first largest value (0 when every value is
   -HUGE_VAL, or when the scan stopped at once). */
size_t bl_profile_grid (bl_profile_fn f, void *arg, double lo, double step, size_t ng,
                        double *grid, double *val, const int *status);

/* Nonzero when grid point M of NG is the global bracket of a maximum: an inner point whose
   value is above both of its neighbours'. */
int bl_profile_bracketed (const double *val, size_t ng, size_t m);

/* Maximize F by Brent's method inside the bracket LO < X < HI, where F(X) = FX is above
   F(LO) = FLO and F(HI) = FHI.  *XMAX is set to the last estimate of the maximum, or to X when
   no iteration succeeded.  Returns BL_OK, or BL_ENOMEM when GSL could not allocate the
   minimizer (*XMAX is then X); no bl_err is filled, so that each caller decides what a
   failed allocation means. */
int bl_profile_brent (bl_profile_fn f, void *arg, double lo, double flo, double x, double fx,
                      double hi, double fhi, const bl_profile_tol *tol, double *xmax);

/* bl_profile_brent inside the global bracket of grid point M (bl_profile_bracketed): *XMAX is
   the refined maximum, or GRID[M] when M is not bracketed.  Same returns. */
int bl_profile_refine (bl_profile_fn f, void *arg, const double *grid, const double *val,
                       size_t ng, size_t m, const bl_profile_tol *tol, double *xmax);

/* A root of F(x) = THR between A and B (either order; F - THR changes sign there) by Brent's
   method.  *ROOT is the last estimate, NAN when no iteration succeeded (no sign change).
   Returns BL_OK, or BL_ENOMEM when GSL could not allocate the solver (*ROOT is then NAN). */
int bl_profile_root (bl_profile_fn f, void *arg, double thr, double a, double b,
                     const bl_profile_tol *tol, double *root);

/* The ends of the interval {x : F(x) >= THR} around XHAT from the grid of
   bl_profile_grid (M its best point): from M the grid is scanned outward to the first point
   on each side below THR, and the root is bracketed between it and its inner neighbour (or
   XHAT itself).  *LO and *HI are NAN where the interval is open (no grid point below THR on
   that side).  Returns BL_OK, or BL_ENOMEM when a solver could not be allocated (that end is
   then NAN; the other is still sought). */
int bl_profile_interval (bl_profile_fn f, void *arg, const double *grid, const double *val,
                         size_t ng, size_t m, double xhat, double thr,
                         const bl_profile_tol *tol, double *lo, double *hi);

/* The threshold of the LEVEL likelihood-ratio interval below the top TOP of a profile:
   TOP - chi2_1^-1(LEVEL) / 2 (Box & Cox 1964, section 4). */
double bl_profile_threshold (double top, double level);

/* The global maximum of F over the closed range [LO, HI] (LO < HI; a log scale is the
   caller's: pass log x and let F exponentiate): F is scanned at NG >= 3 equally spaced points
   LO .. HI (a caller scanning a log range asks for at least 8 points a decade, the coarse
   scan of issue 13), the first largest value is taken as the global bracket, and Brent's
   method refines it inside its two neighbours (bl_profile_refine).  The scan is coarse, so a
   maximum narrower than two grid steps can be missed; nothing else can.  Filled by
   bl_profile_search. */
typedef struct bl_profile_max {
  double x;                       /* the maximum (refined), or the best grid point */
  double fx;                      /* F(x); -HUGE_VAL when F is -HUGE_VAL everywhere */
  int edge;                       /* -1: the best grid point is LO; +1: it is HI; 0: inside */
  size_t nscan;                   /* the number of grid points of the scan */
} bl_profile_max;

/* The number of grid points of a scan of [LO, HI] at PER_UNIT points per unit (per decade
   when LO and HI are log10 values; per e-fold with natural logs, so 8 a decade is
   8 / ln 10 = 3.5 per unit): ceil((HI - LO) PER_UNIT) + 1, and at least 3. */
size_t bl_profile_npoints (double lo, double hi, double per_unit);

/* Scan and refine as above, with GRID and VAL caller's scratch of NG doubles each (left
   holding the scan, for bl_profile_interval).  STATUS as in bl_profile_grid.  Returns BL_OK,
   or BL_ENOMEM from the minimizer (OUT is then the best grid point). */
int bl_profile_search (bl_profile_fn f, void *arg, double lo, double hi, size_t ng,
                       double *grid, double *val, const int *status,
                       const bl_profile_tol *tol, bl_profile_max *out);

#endif
