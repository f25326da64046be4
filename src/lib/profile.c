/* profile.c -- the profile-likelihood drivers (profile.h): grid scan, global bracket, Brent's
   method for the maximum, and the interval roots, over GSL's gsl_min and gsl_root. */
#include <math.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_min.h>
#include <gsl/gsl_roots.h>
#include "profile.h"

/* F and its context, seen by GSL as -F (a minimizer) or F - THR (a root). */
typedef struct wrap {
  bl_profile_fn f;
  void *arg;
  double thr;
} wrap;

static double neg (double x, void *p) { const wrap *w = p; return -w->f (x, w->arg); }
static double gap (double x, void *p) { const wrap *w = p; return w->f (x, w->arg) - w->thr; }

size_t
bl_profile_grid (bl_profile_fn f, void *arg, double lo, double step, size_t ng, double *grid,
                 double *val, const int *status)
{
  size_t m = 0;
  for (size_t k = 0; k < ng; k++) {
    grid[k] = lo + step * (double) k;
    val[k] = f (grid[k], arg);
    if (status && *status != BL_OK)
      break;
    if (val[k] > val[m])
      m = k;
  }
  return m;
}

int
bl_profile_bracketed (const double *val, size_t ng, size_t m)
{
  return m > 0 && m + 1 < ng && val[m] > val[m - 1] && val[m] > val[m + 1];
}

int
bl_profile_brent (bl_profile_fn f, void *arg, double lo, double flo, double x, double fx,
                  double hi, double fhi, const bl_profile_tol *tol, double *xmax)
{
  wrap w = { f, arg, 0.0 };
  gsl_function F = { neg, &w };
  gsl_min_fminimizer *s = gsl_min_fminimizer_alloc (gsl_min_fminimizer_brent);
  *xmax = x;
  if (!s)
    return BL_ENOMEM;
  if (gsl_min_fminimizer_set_with_values (s, &F, x, -fx, lo, -flo, hi, -fhi) == GSL_SUCCESS) {
    for (size_t it = 0; it < tol->max_iter; it++) {
      const double lo0 = gsl_min_fminimizer_x_lower (s), hi0 = gsl_min_fminimizer_x_upper (s);
      if (gsl_min_fminimizer_iterate (s) != GSL_SUCCESS)
        break;
      *xmax = gsl_min_fminimizer_x_minimum (s);
      if (gsl_min_test_interval (gsl_min_fminimizer_x_lower (s), gsl_min_fminimizer_x_upper (s),
                                 tol->epsabs, tol->epsrel) == GSL_SUCCESS)
        break;
      if (tol->stall && gsl_min_fminimizer_x_lower (s) == lo0
          && gsl_min_fminimizer_x_upper (s) == hi0)
        break;
    }
  }
  gsl_min_fminimizer_free (s);
  return BL_OK;
}

int
bl_profile_refine (bl_profile_fn f, void *arg, const double *grid, const double *val,
                   size_t ng, size_t m, const bl_profile_tol *tol, double *xmax)
{
  *xmax = grid[m];
  if (!bl_profile_bracketed (val, ng, m))
    return BL_OK;
  return bl_profile_brent (f, arg, grid[m - 1], val[m - 1], grid[m], val[m], grid[m + 1],
                           val[m + 1], tol, xmax);
}

int
bl_profile_root (bl_profile_fn f, void *arg, double thr, double a, double b,
                 const bl_profile_tol *tol, double *root)
{
  wrap w = { f, arg, thr };
  gsl_function F = { gap, &w };
  gsl_root_fsolver *s = gsl_root_fsolver_alloc (gsl_root_fsolver_brent);
  *root = NAN;
  if (!s)
    return BL_ENOMEM;
  if (gsl_root_fsolver_set (s, &F, a < b ? a : b, a < b ? b : a) == GSL_SUCCESS) {
    for (size_t it = 0; it < tol->max_iter; it++) {
      const double lo0 = gsl_root_fsolver_x_lower (s), hi0 = gsl_root_fsolver_x_upper (s);
      if (gsl_root_fsolver_iterate (s) != GSL_SUCCESS)
        break;
      *root = gsl_root_fsolver_root (s);
      if (gsl_root_test_interval (gsl_root_fsolver_x_lower (s), gsl_root_fsolver_x_upper (s),
                                  tol->epsabs, tol->epsrel) == GSL_SUCCESS)
        break;
      if (tol->stall && gsl_root_fsolver_x_lower (s) == lo0
          && gsl_root_fsolver_x_upper (s) == hi0)
        break;
    }
  }
  gsl_root_fsolver_free (s);
  return BL_OK;
}

int
bl_profile_interval (bl_profile_fn f, void *arg, const double *grid, const double *val,
                     size_t ng, size_t m, double xhat, double thr, const bl_profile_tol *tol,
                     double *lo, double *hi)
{
  int st = BL_OK;
  *lo = *hi = NAN;
  /* Scan outward from the maximum; the bracket's inner end is the last grid point still
     above the threshold, or the maximum itself. */
  for (size_t k = m + 1; k-- > 0;)
    if (grid[k] < xhat && val[k] < thr) {
      if (bl_profile_root (f, arg, thr, grid[k],
                           (k + 1 < ng && grid[k + 1] < xhat) ? grid[k + 1] : xhat, tol, lo)
          != BL_OK)
        st = BL_ENOMEM;
      break;
    }
  for (size_t k = m; k < ng; k++)
    if (grid[k] > xhat && val[k] < thr) {
      if (bl_profile_root (f, arg, thr, (k >= 1 && grid[k - 1] > xhat) ? grid[k - 1] : xhat,
                           grid[k], tol, hi) != BL_OK)
        st = BL_ENOMEM;
      break;
    }
  return st;
}

double
bl_profile_threshold (double top, double level)
{
  return top - 0.5 * gsl_cdf_chisq_Qinv (1.0 - level, 1.0);   /* from the upper tail */
}

size_t
bl_profile_npoints (double lo, double hi, double per_unit)
{
  const double n = ceil ((hi - lo) * per_unit) + 1.0;
  return n < 3.0 ? 3 : (size_t) n;
}

int
bl_profile_search (bl_profile_fn f, void *arg, double lo, double hi, size_t ng, double *grid,
                   double *val, const int *status, const bl_profile_tol *tol,
                   bl_profile_max *out)
{
  const double step = (hi - lo) / (double) (ng - 1);
  const size_t m = bl_profile_grid (f, arg, lo, step, ng, grid, val, status);
  int st = BL_OK;
  out->nscan = ng;
  out->x = grid[m];
  out->fx = val[m];
  out->edge = m == 0 ? -1 : (m + 1 == ng ? 1 : 0);
  if (status && *status != BL_OK)
    return BL_OK;               /* the caller's error stands; OUT is not a maximum */
  if (out->edge == 0 && isfinite (val[m])) {
    double x;
    st = bl_profile_refine (f, arg, grid, val, ng, m, tol, &x);
    if (st == BL_OK && x != grid[m]) {
      const double fx = f (x, arg);
      if (fx >= val[m] && !(status && *status != BL_OK)) {
        out->x = x;
        out->fx = fx;
      }
    }
  }
  return st;
}
