/* fit_wls.c -- weighted least squares: known weights, and a variance function with its power
   fixed or estimated by maximum likelihood.

   Model: y_i is Normal(mu_i, sigma^2 v_i / a_i), mu = X b, a_i the prior weights and
   v_i = x_i^K (a positive column) or mu_i^K (the fitted mean).  With w_i = a_i / v_i and
   sigma^2 profiled out (sigma^2 = S / n, S = sum w_i r_i^2), the log-likelihood is
     l(b, K) = -n/2 (log(2 pi S / n) + 1) + 1/2 sum log w_i,
   which includes + 1/2 sum log w_i, so WLS and OLS share one scale (the normal density
   with variance sigma^2 / w_i; e.g. Carroll & Ruppert 1988, Transformation and Weighting in
   Regression, ch. 2-3).

   - COL^K: for fixed K, weighted least squares is the MLE of b; an estimated K maximizes the
     profile l(K) (grid, then Brent's method); its standard error is 1 / sqrt(-l''(K)) from a
     central second difference of the profile (the profile's curvature is the observed
     information for K; Murphy & van der Vaart 2000, JASA 95, 449-465).
   - fitted^K: v depends on b, so WLS is not the MLE.  Feasible WLS (fit, reweight from the
     fitted means, refit) gives a start; then l(b, K) is maximized jointly by Newton's method
     with the analytic gradient and a finite-difference Hessian, with a backtracking line
     search.  The covariance of (b, K) is the inverse of that Hessian (observed information).
     Analytic gradient, with v_i = mu_i^K / a_i and r_i = y_i - mu_i:
       dl/dmu_i = (n / S) r_i / v_i + (n / 2S) K r_i^2 / (mu_i v_i) - K / (2 mu_i)
       dl/db    = X' dl/dmu
       dl/dK    = (n / 2S) sum (r_i^2 / v_i) log mu_i - 1/2 sum log mu_i */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include "alloc.h"
#include "fit_engine.h"
#include "fit_glm.h"
#include "profile.h"
#include "rowblock.h"

#define BLOCK 1024
#define LOG_2PI 1.8378770664093454835606594728112

/* ---------------------------------------------------------------- COL^K */

typedef struct colk {
  const bl_design *d;
  const bl_fit_opts *o;
  const double *a, *v;
  double *w;
  int status;
  bl_err *err;
} colk;

static void
colk_weights (const colk *c, double K)
{
  const size_t n = bl_design_n (c->d);
  for (size_t i = 0; i < n; i++)
    c->w[i] = (c->a ? c->a[i] : 1.0) * exp (-K * log (c->v[i]));
}

static double
colk_loglik (double K, void *arg)
{
  colk *c = arg;
  bl_fit *f;
  bl_err e;
  double l;
  /* the caller's cancel flag: no more profile fits (the estimate fails with BL_ECANCEL) */
  if (c->o->irls.cancel && *c->o->irls.cancel) {
    if (c->status == BL_OK)
      c->status = bl_fail (c->err, BL_ECANCEL, "wls", "the fit was cancelled");
    return -HUGE_VAL;
  }
  colk_weights (c, K);
  f = bl_fit_core (c->d, NULL, c->w, c->o, 1, &e);
  if (!f) {
    if (c->status == BL_OK && e.code != BL_OK) {
      c->status = e.code;
      if (c->err)
        *c->err = e;
    }
    return -HUGE_VAL;
  }
  l = f->st.converged ? f->st.loglik : -HUGE_VAL;
  bl_fit_free (f);
  return isfinite (l) ? l : -HUGE_VAL;
}

/* The search for K: Brent's method to 1e-10 in K, at most 200 profile fits, stopping when
   an iteration makes no more progress (GSL's Brent steps are at least sqrt(DBL_EPSILON) |K|
   long, so for |K| above about 0.01 the bracket never gets within 1e-10; once an iteration
   leaves both ends where they were K no longer changes: stop there rather than spend the
   rest of the 200 profile fits). */
static const bl_profile_tol colk_tol = { 1e-10, 0.0, 200, 1 };
#define COLK_GRID_STEP 0.5        /* grid step of the profile in K */
#define COLK_GRID_MAX 64          /* grid points at most */

static int
colk_estimate (colk *c, double *K_out, double *se_out)
{
  const double step = COLK_GRID_STEP;
  const size_t ng0 = (size_t) lround ((BL_WLS_POWER_MAX - BL_WLS_POWER_MIN) / step) + 1;
  const size_t ng = ng0 < COLK_GRID_MAX ? ng0 : COLK_GRID_MAX;
  double K;
  size_t m;
  double vals[COLK_GRID_MAX], grid[COLK_GRID_MAX];
  m = bl_profile_grid (colk_loglik, c, BL_WLS_POWER_MIN, step, ng, grid, vals, &c->status);
  if (c->status != BL_OK)
    return c->status;
  if (!(vals[m] > -HUGE_VAL))
    return bl_fail (c->err, BL_ENOCONV, "--variance", "the profile likelihood of the power "
                    "could not be evaluated anywhere in [%g, %g]", BL_WLS_POWER_MIN,
                    BL_WLS_POWER_MAX);
  if (m == 0 || m + 1 == ng0)
    return bl_fail (c->err, BL_ENOCONV, "--variance", "the variance power runs to the end of "
                    "its range [%g, %g]: it is not identified by these data",
                    BL_WLS_POWER_MIN, BL_WLS_POWER_MAX);
  if (bl_profile_refine (colk_loglik, c, grid, vals, ng, m, &colk_tol, &K) != BL_OK)
    return bl_fail (c->err, BL_ENOMEM, "wls", "out of memory");
  if (c->status != BL_OK)
    return c->status;
  {
    const double h = 1e-3 * (fabs (K) > 1.0 ? fabs (K) : 1.0);
    const double l0 = colk_loglik (K, c), lp = colk_loglik (K + h, c), lm = colk_loglik (K - h, c);
    const double d2 = (lp - 2.0 * l0 + lm) / (h * h);
    *se_out = d2 < 0.0 ? 1.0 / sqrt (-d2) : NAN;
  }
  *K_out = K;
  return c->status;
}

/* ---------------------------------------------------------------- fitted^K */

typedef struct mlk {
  const bl_design *d;
  size_t n, p, r;            /* rows; columns; free coefficients (non-aliased) */
  size_t *col;               /* the non-aliased columns, length r */
  const double *y, *a;
  int est;                   /* K is a parameter */
  double K_fixed;
  double *b0, *s;            /* start and scale: theta_j = (par_j - b0_j) / s_j */
  double *X;                 /* one block, BLOCK x p */
  double *beta;              /* full-length coefficients, work */
  double *mu;                /* length n: the means at the last evaluation */
  size_t q;                  /* parameters in theta: r, plus 1 when K is estimated */
  double *th, *G;            /* theta and the gradient of -l there, length q */
  double *H, *Hc;            /* Hessian of -l (then its inverse) and a copy, q x q */
  double *tp, *gp, *gm, *step;   /* Newton's work: a point, two gradients, the step */
  volatile sig_atomic_t *cancel;   /* the fits' cancel flag (irls.h); NULL for none */
} mlk;

/* Parameters from theta: beta (length p; aliased 0) and K. */
static double
mlk_params (mlk *m, const double *th)
{
  memset (m->beta, 0, m->p * sizeof (double));
  for (size_t j = 0; j < m->r; j++)
    m->beta[m->col[j]] = m->b0[j] + m->s[j] * th[j];
  return m->est ? m->b0[m->r] + m->s[m->r] * th[m->r] : m->K_fixed;
}

/* -l at theta and, when G is not NULL, its gradient in theta.  Returns HUGE_VAL when some
   mean is <= 0 (the variance function does not exist there). */
static double
mlk_eval (mlk *m, const double *th, double *G, size_t *bad_row)
{
  const size_t n = m->n, p = m->p, r = m->r;
  const double K = mlk_params (m, th);
  long double S = 0.0L, slw = 0.0L;
  double lik;
  /* cancelled: no value, so that every loop below ends at once (bl_fit_wls_run reports
     BL_ECANCEL) */
  if (m->cancel && *m->cancel)
    return HUGE_VAL;
  /* first pass: means, S and sum log w */
  BL_ROWBLOCK_FOR (rb, 0, n, BLOCK) {
    const size_t r0 = rb.row0, nb = rb.n;
    bl_design_fill (m->d, r0, nb, m->X, BLOCK);
    for (size_t i = 0; i < nb; i++) {
      double mu = 0.0;
      const double ai = m->a ? m->a[r0 + i] : 1.0;
      for (size_t j = 0; j < p; j++)
        mu += m->X[i + j * BLOCK] * m->beta[j];
      if (!(mu > 0.0)) {
        if (bad_row)
          *bad_row = r0 + i;
        return HUGE_VAL;
      }
      m->mu[r0 + i] = mu;
      {
        const double lw = log (ai) - K * log (mu), res = m->y[r0 + i] - mu;
        S += exp (lw) * res * res;
        slw += lw;
      }
    }
  }
  if (!(S > 0.0L))
    return HUGE_VAL;
  lik = -0.5 * (double) n * (LOG_2PI + log ((double) S / (double) n) + 1.0) + 0.5 * (double) slw;
  if (G) {
    const double nS = (double) n / (double) S;
    long double dK = 0.0L;
    memset (G, 0, (r + (m->est ? 1 : 0)) * sizeof (double));
    BL_ROWBLOCK_FOR (rb, 0, n, BLOCK) {
      const size_t r0 = rb.row0, nb = rb.n;
      bl_design_fill (m->d, r0, nb, m->X, BLOCK);
      for (size_t i = 0; i < nb; i++) {
        const double mu = m->mu[r0 + i], ai = m->a ? m->a[r0 + i] : 1.0;
        const double res = m->y[r0 + i] - mu, lmu = log (mu);
        const double iv = ai * exp (-K * lmu);                     /* 1 / v_i */
        const double dmu = nS * res * iv + 0.5 * nS * K * res * res * iv / mu - 0.5 * K / mu;
        for (size_t j = 0; j < r; j++)
          G[j] += m->X[i + m->col[j] * BLOCK] * dmu;
        dK += (0.5 * nS * res * res * iv - 0.5) * lmu;
      }
    }
    for (size_t j = 0; j < r; j++)
      G[j] = -G[j] * m->s[j];
    if (m->est)
      G[r] = -(double) dK * m->s[r];
  }
  return -lik;
}

/* Hessian of -l in theta by central differences of the gradient, symmetrized. */
static int
mlk_hessian (mlk *m, const double *th, size_t q, double *H, double *tp, double *gp, double *gm)
{
  const double h = 1e-5;
  for (size_t k = 0; k < q; k++) {
    memcpy (tp, th, q * sizeof (double));
    tp[k] = th[k] + h;
    if (mlk_eval (m, tp, gp, NULL) >= HUGE_VAL)
      return -1;
    tp[k] = th[k] - h;
    if (mlk_eval (m, tp, gm, NULL) >= HUGE_VAL)
      return -1;
    for (size_t j = 0; j < q; j++)
      H[j + k * q] = (gp[j] - gm[j]) / (2.0 * h);
  }
  for (size_t k = 0; k < q; k++)
    for (size_t j = 0; j < k; j++)
      H[j + k * q] = H[k + j * q] = 0.5 * (H[j + k * q] + H[k + j * q]);
  return 0;
}

/* Newton's method for the minimum of -l from theta TH (value *FV_IO, gradient G), with the
   work arrays of mlk (H, HC q x q; TP, GP, GM, STEP length q).  On return TH,
   G and *FV_IO are at the last accepted point and *ITER_OUT counts the iterations.  Returns 1
   when converged, 0 when not (a Hessian that could not be formed or factored, or the
   iteration cap). */
static int
mlk_newton (mlk *m, double *th, size_t q, double *G, double *H, double *Hc, double *tp,
            double *gp, double *gm, double *step, double *fv_io, size_t *iter_out)
{
  size_t iter;
  int converged = 0;
  double fv = *fv_io;
  gsl_matrix_view Hv;
  gsl_vector_view sv;
  for (iter = 0; iter < 200 && !converged; iter++) {
    double gmax = 0.0, slope = 0.0, t = 1.0, fn = HUGE_VAL;
    for (size_t k = 0; k < q; k++)
      gmax = fabs (G[k]) > gmax ? fabs (G[k]) : gmax;
    if (gmax <= 1e-9) {
      converged = 1;
      break;
    }
    if (mlk_hessian (m, th, q, H, tp, gp, gm) != 0)
      return 0;
    /* Newton step H s = -G; when H is not positive definite, add a multiple of I
       (Levenberg 1944, Quart. Appl. Math. 2, 164-168). */
    for (double lam = 0.0;; lam = lam ? 10.0 * lam : 1e-6) {
      int ok;
      {
        memcpy (Hc, H, q * q * sizeof *Hc);
        for (size_t k = 0; k < q; k++)
          Hc[k + k * q] += lam;
        Hv = gsl_matrix_view_array (Hc, q, q);
        ok = gsl_linalg_cholesky_decomp1 (&Hv.matrix) == GSL_SUCCESS;
        if (ok) {
          for (size_t k = 0; k < q; k++)
            step[k] = -G[k];
          sv = gsl_vector_view_array (step, q);
          ok = gsl_linalg_cholesky_svx (&Hv.matrix, &sv.vector) == GSL_SUCCESS;
        }
      }
      if (ok)
        break;
      if (lam > 1e12)
        return 0;
    }
    for (size_t k = 0; k < q; k++)
      slope += G[k] * step[k];
    /* backtracking line search (Armijo condition) */
    for (int h = 0; h < 60; h++, t *= 0.5) {
      for (size_t k = 0; k < q; k++)
        tp[k] = th[k] + t * step[k];
      fn = mlk_eval (m, tp, gp, NULL);
      if (fn <= fv + 1e-4 * t * slope)
        break;
    }
    if (!(fn < HUGE_VAL) || fn > fv) {
      /* no decrease possible: at the optimum to rounding, or stuck */
      converged = gmax <= 1e-5;
      break;
    }
    {
      double smax = 0.0;
      for (size_t k = 0; k < q; k++)
        smax = fabs (t * step[k]) > smax ? fabs (t * step[k]) : smax;
      memcpy (th, tp, q * sizeof *th);
      memcpy (G, gp, q * sizeof *G);
      *fv_io = fv = fn;
      if (smax <= 1e-12)
        converged = 1;
    }
  }
  *iter_out = iter;
  return converged;
}

static void
fail_row (const bl_design *d, size_t row, bl_err *err, const char *what, double mu)
{
  char where[1100];
  snprintf (where, sizeof where, "%s:%zu", bl_design_source (d), bl_design_line (d, row));
  bl_fail (err, BL_EDATA, where, "%s fitted mean %.6g is <= 0: the variance fitted^K needs "
           "positive fitted values (try a GLM with a log link)", what, mu);
}

/* The starting power of fitted^K from the OLS fit F: the slope of log r^2 on log mu (the
   log-residual regression of Carroll & Ruppert 1988, section 3.3), kept within [-2, 5];
   K0 when fewer than three rows have mu > 0 and r != 0. */
static double
start_power (const bl_fit *f, const double *a, size_t n, double K0)
{
  double K = K0;
  long double sx = 0, sy = 0, sxx = 0, sxy = 0;
  size_t cnt = 0;
  for (size_t i = 0; i < n; i++) {
    const double r = f->y[i] - f->mu[i];
    if (f->mu[i] > 0.0 && r != 0.0) {
      const double x = log (f->mu[i]), yy = log (r * r * (a ? a[i] : 1.0));
      sx += x; sy += yy; sxx += x * x; sxy += x * yy;
      cnt++;
    }
  }
  if (cnt > 2 && sxx * cnt - sx * sx > 0) {
    K = (double) ((cnt * sxy - sx * sy) / (cnt * sxx - sx * sx));
    K = K < -2.0 ? -2.0 : K > 5.0 ? 5.0 : K;
  }
  return K;
}

/* Feasible WLS at the power K: weights a / mu^K from the fitted means of *FP, refit, until
   the coefficients settle (or OPT->wls_max_iter refits).  W (length n) is the weights' work.
   *FP is replaced by each refit (the old fit freed); *IT_OUT counts the refits and
   *SETTLED_OUT says whether they settled.  Returns 0, or -1 on failure or cancellation (ERR
   says why, unless cancelled; *FP is left for the caller to free). */
static int
feasible_wls (const bl_design *d, const bl_fit_opts *opt, const bl_fit_opts *o,
              const double *a, double K, double *w, bl_fit **fp, size_t *it_out,
              int *settled_out, bl_err *err)
{
  const size_t n = bl_design_n (d), p = bl_design_p (d);
  const volatile sig_atomic_t *cancel = o->irls.cancel;
  bl_fit *f = *fp, *g;
  size_t it;
  *settled_out = 0;
  for (it = 0; it < opt->wls_max_iter; it++) {
    double change = 0.0;
    for (size_t i = 0; i < n; i++) {
      if (!(f->mu[i] > 0.0)) {
        fail_row (d, i, err, "feasible WLS:", f->mu[i]);
        return -1;
      }
      w[i] = (a ? a[i] : 1.0) * exp (-K * log (f->mu[i]));
    }
    g = bl_fit_core (d, NULL, w, o, 1, err);
    if (!g || (cancel && *cancel)) {     /* cancelled: reported by bl_fit_wls_run */
      bl_fit_free (g);
      return -1;
    }
    for (size_t j = 0; j < p; j++)
      if (!g->aliased[j] && !f->aliased[j]) {
        const double dch = fabs (g->beta[j] - f->beta[j]) / (fabs (g->beta[j]) + g->se[j]);
        if (dch > change)
          change = dch;
      }
    bl_fit_free (f);
    *fp = f = g;
    if (change <= 1e-10) {
      *settled_out = 1;
      it++;
      break;
    }
  }
  *it_out = it;
  return 0;
}

/* Make M's work for the joint maximization from the feasible WLS fit F at the power K: the
   free columns, the start and scale of theta, the block and the Newton arrays.  Returns 0,
   or -1 when memory runs out (what was made is freed by mlk_free). */
static int
mlk_setup (mlk *m, const bl_design *d, const bl_fit_opts *opt, const double *a,
           const bl_fit *f, double K)
{
  const size_t n = bl_design_n (d), p = bl_design_p (d);
  size_t q;
  m->d = d;
  m->n = n;
  m->p = p;
  m->y = bl_design_y (d);
  m->a = a;
  m->est = opt->power_est;
  m->K_fixed = opt->power;
  m->col = bl_mallocn (p, sizeof (size_t));
  m->b0 = bl_mallocn (p + 1, sizeof (double));
  m->s = bl_mallocn (p + 1, sizeof (double));
  m->X = bl_mallocn ((size_t) BLOCK * p, sizeof (double));
  m->beta = bl_mallocn (p, sizeof (double));
  m->mu = bl_mallocn (n, sizeof (double));
  if (!m->col || !m->b0 || !m->s || !m->X || !m->beta || !m->mu)
    return -1;
  for (size_t j = 0; j < p; j++)
    if (!f->aliased[j]) {
      m->col[m->r] = j;
      m->b0[m->r] = f->beta[j];
      m->s[m->r] = (f->se[j] > 0.0 && isfinite (f->se[j])) ? f->se[j] : 1.0;
      m->r++;
    }
  if (m->est) {
    m->b0[m->r] = K;
    m->s[m->r] = 0.1;
  }
  m->q = q = m->r + (m->est ? 1 : 0);
  m->th = bl_calloc (q, sizeof *m->th);
  m->G = bl_mallocn (q, sizeof *m->G);
  m->H = bl_mallocn (q * q, sizeof *m->H);
  m->Hc = bl_mallocn (q * q, sizeof *m->Hc);
  m->tp = bl_mallocn (q, sizeof *m->tp);
  m->gp = bl_mallocn (q, sizeof *m->gp);
  m->gm = bl_mallocn (q, sizeof *m->gm);
  m->step = bl_mallocn (q, sizeof *m->step);
  if (!m->th || !m->G || !m->H || !m->Hc || !m->tp || !m->gp || !m->gm || !m->step)
    return -1;
  return 0;
}

static void
mlk_free (mlk *m)
{
  bl_free (m->col);
  bl_free (m->b0);
  bl_free (m->s);
  bl_free (m->X);
  bl_free (m->beta);
  bl_free (m->mu);
  bl_free (m->th);
  bl_free (m->G);
  bl_free (m->H);
  bl_free (m->Hc);
  bl_free (m->tp);
  bl_free (m->gp);
  bl_free (m->gm);
  bl_free (m->step);
}

/* Maximize l(b, K) by mlk_newton from theta = 0, then invert the observed information at
   the maximum into M->H.  On success returns 0 with *FV_OUT = -l at the maximum and
   *ITER_OUT the Newton iterations; else -1 with ERR saying why. */
static int
mlk_maximize (mlk *m, double *fv_out, size_t *iter_out, bl_err *err)
{
  const size_t q = m->q;
  size_t bad = 0;
  double fv = mlk_eval (m, m->th, m->G, &bad);
  gsl_matrix_view Hv;
  if (fv >= HUGE_VAL) {
    fail_row (m->d, bad, err, "the starting", m->mu[bad]);
    return -1;
  }
  /* the observed information at the maximum */
  if (!mlk_newton (m, m->th, q, m->G, m->H, m->Hc, m->tp, m->gp, m->gm, m->step, &fv,
                   iter_out)
      || mlk_hessian (m, m->th, q, m->H, m->tp, m->gp, m->gm) != 0) {
    bl_fail (err, BL_ENOCONV, "--variance", "the maximization of the likelihood over the "
             "coefficients%s did not converge", m->est ? " and the power K" : "");
    return -1;
  }
  Hv = gsl_matrix_view_array (m->H, q, q);
  if (gsl_linalg_cholesky_decomp1 (&Hv.matrix) != GSL_SUCCESS
      || gsl_linalg_cholesky_invert (&Hv.matrix) != GSL_SUCCESS) {
    bl_fail (err, BL_ENOCONV, "--variance", "the likelihood has no proper maximum in (b, K): "
             "its information matrix is not positive definite");
    return -1;
  }
  *fv_out = fv;
  return 0;
}

/* Fill F, refitted with the weights W at the maximum of M (power K, -l = FV, ITER Newton
   iterations, inverse information in M->H): coefficients, means, deviance, dispersion,
   covariance of (b, K), likelihood. */
static void
mlk_fill (const mlk *m, bl_fit *f, const double *w, double K, double fv, size_t iter)
{
  const size_t n = m->n, p = m->p, q = m->q;
  long double dev = 0.0L;
  for (size_t j = 0; j < p; j++)
    f->beta[j] = f->aliased[j] ? NAN : m->beta[j];
  for (size_t i = 0; i < n; i++) {
    const double r = f->y[i] - m->mu[i];
    f->mu[i] = f->eta[i] = m->mu[i];
    dev += w[i] * r * r;
  }
  f->st.deviance = f->st.pearson = (double) dev;
  f->st.phi_pearson = f->st.dof_resid ? f->st.pearson / (double) f->st.dof_resid : NAN;
  f->st.phi_ml = f->st.deviance / (double) n;
  f->st.phi_used = f->st.phi_pearson;
  for (size_t j = 0; j < p * p; j++)
    f->cov[j] = NAN;
  for (size_t j = 0; j < m->r; j++)
    for (size_t k = 0; k < m->r; k++)
      f->cov[m->col[j] + m->col[k] * p] = m->H[j + k * q] * m->s[j] * m->s[k];
  bl_fit_wald_table (f);
  bl_fit_set_loglik (f, -fv, f->st.rank + 1 + (m->est ? 1u : 0u));
  f->var.power = K;
  f->var.power_se = m->est ? sqrt (m->H[m->r + m->r * q]) * m->s[m->r] : NAN;
  f->st.iterations = iter;
}

static bl_fit *
fit_fitted_power (const bl_design *d, const bl_fit_opts *opt, const bl_fit_opts *o,
                  const double *a, bl_err *err)
{
  const size_t n = bl_design_n (d);
  double *w = bl_mallocn (n, sizeof *w);
  double K = opt->power_est ? 1.0 : opt->power, fv;
  bl_fit *f = NULL, *g = NULL;
  size_t it = 0, iter;
  int settled = 0;
  mlk m;

  memset (&m, 0, sizeof m);
  m.cancel = o->irls.cancel;
  if (!w)
    goto nomem;
  /* Feasible WLS: OLS, then weights a / mu^K from the fitted means, refit until b settles.
     With K estimated, K starts at the slope of log r^2 on log mu from the OLS fit (the
     log-residual regression of Carroll & Ruppert 1988, section 3.3), kept within [-2, 5]. */
  f = bl_fit_core (d, NULL, a, o, 1, err);
  if (!f)
    goto fail;
  if (opt->power_est)
    K = start_power (f, a, n, K);
  if (feasible_wls (d, opt, o, a, K, w, &f, &it, &settled, err) != 0)
    goto fail;

  /* Joint maximum likelihood over (b, K) from the feasible WLS point. */
  if (mlk_setup (&m, d, opt, a, f, K) != 0)
    goto nomem;
  if (mlk_maximize (&m, &fv, &iter, err) != 0)
    goto fail;
  /* Fill the fit at the maximum: weights, means, deviance, likelihood, covariance. */
  K = mlk_params (&m, m.th);
  mlk_eval (&m, m.th, NULL, NULL);
  for (size_t i = 0; i < n; i++)
    w[i] = (a ? a[i] : 1.0) * exp (-K * log (m.mu[i]));
  g = bl_fit_core (d, NULL, w, o, 0, err);
  if (!g)
    goto fail;
  bl_fit_free (f);
  f = g;
  mlk_fill (&m, f, w, K, fv, iter);
  f->var.wls_iterations = it;
  if (!settled
      && bl_warnings_add (&f->warn, "feasible WLS did not settle in %zu reweighting steps; "
                          "the likelihood maximization went on from its last step",
                          opt->wls_max_iter) != BL_OK)
    goto nomem;
  goto done;
nomem:
  bl_fail (err, BL_ENOMEM, "wls", "out of memory");
fail:
  bl_fit_free (f);
  f = NULL;
done:
  bl_free (w);
  mlk_free (&m);
  return f;
}

/* ---------------------------------------------------------------- entry */

bl_fit *
bl_fit_wls_run (const bl_design *d, const bl_fit_opts *opt, bl_err *err)
{
  const double *a = bl_design_prior_w (d);
  bl_fit_opts o = *opt;
  bl_fit *f = NULL;
  if ((opt->fam && !bl_family_has (opt->fam, BL_FAM_NORMAL))
      || (opt->link && opt->link != &bl_link_identity)) {
    bl_fail (err, BL_ESPEC, "--method", "wls is least squares with the identity link: leave "
             "out --family and --link");
    return NULL;
  }
  if (bl_design_offset (d)) {
    bl_fail (err, BL_ESPEC, "--offset", "an offset applies to GLMs only, not to --method wls");
    return NULL;
  }
  o.method = BL_METHOD_WLS;
  o.fam = &bl_family_gaussian;
  o.link = &bl_link_identity;
  o.se = BL_SE_MODEL;
  switch (opt->variance) {
  case BL_VARIANCE_NONE:
    f = bl_fit_core (d, NULL, NULL, &o, 0, err);
    if (f)
      snprintf (f->var.expr, sizeof f->var.expr, "%s", "");
    break;
  case BL_VARIANCE_COLUMN: {
    const size_t n = bl_design_n (d);
    colk c;
    double K = opt->power, se = NAN;
    if (!bl_design_varcol (d)) {
      bl_fail (err, BL_ESPEC, "--variance", "no variance column in the design");
      return NULL;
    }
    c.d = d;
    c.o = &o;
    c.a = a;
    c.v = bl_design_varcol (d);
    c.status = BL_OK;
    c.err = err;
    c.w = bl_mallocn (n, sizeof (double));
    if (!c.w) {
      bl_fail (err, BL_ENOMEM, "wls", "out of memory");
      return NULL;
    }
    if (opt->power_est && colk_estimate (&c, &K, &se) != BL_OK) {
      bl_free (c.w);
      return NULL;
    }
    colk_weights (&c, K);
    f = bl_fit_core (d, NULL, c.w, &o, 0, err);
    bl_free (c.w);
    if (!f)
      return NULL;
    f->var.power = K;
    f->var.power_se = se;
    if (f->st.converged && opt->power_est)
      bl_fit_set_loglik (f, f->st.loglik, f->st.k + 1);
    break;
  }
  case BL_VARIANCE_FITTED:
    f = fit_fitted_power (d, opt, &o, a, err);
    break;
  }
  /* cancelled (the flag the fits poll): whatever the profile or the maximization made of
     the fits cut short, the answer is BL_ECANCEL */
  if (opt->irls.cancel && *opt->irls.cancel && opt->variance != BL_VARIANCE_NONE) {
    bl_fit_free (f);
    bl_fail (err, BL_ECANCEL, "wls", "the fit was cancelled");
    return NULL;
  }
  if (!f)
    return NULL;
  f->method = BL_METHOD_WLS;
  f->var.kind = opt->variance;
  f->var.power_estimated = opt->power_est && opt->variance != BL_VARIANCE_NONE;
  if (opt->variance != BL_VARIANCE_NONE) {
    char k[32];
    bl_format_shortest (f->var.power, k);
    if (opt->power_est)
      snprintf (k, sizeof k, "%.4g", f->var.power);
    snprintf (f->var.expr, sizeof f->var.expr, "%s^%s",
              opt->variance == BL_VARIANCE_FITTED ? "fitted"
              : opt->variance_col ? opt->variance_col : "column", k);
  }
  return f;
}
