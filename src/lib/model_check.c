/* model_check.c -- the checks across the keys of a model file read back (bl_model_check):
   a file that contradicts itself is refused with the JSON path of the first key found wrong,
   before anything is predicted with it.

   The checks, in the order of the file (doc/model-format.md, "What a reader checks"): the
   response and weights named, the column labels distinct and the intercept first, every
   categorical column once with distinct levels and its reference not among them, the family's
   parameter in its range, the standard-error kind one of the table's, the dispersions, the
   counts (rank = estimated coefficients <= p, rank + dof_resid <= n), the covariance
   (variances >= 0, symmetric, positive semi-definite within stated tolerances) and the
   smearing summaries (n and stride as the writer makes them, and the inequalities every set
   of residuals satisfies).  Common practice, no source, except where a formula says. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include <gsl/gsl_cblas.h>
#include "alloc.h"
#include "model_impl.h"

/* BL_EDATA for the key at PATH (a JSON path) of M's file: "'PATH': MESSAGE". */
static int
bad (const bl_model *m, bl_err *err, const char *path, const char *fmt, ...)
{
  char msg[480];
  va_list ap;
  va_start (ap, fmt);
  vsnprintf (msg, sizeof msg, fmt, ap);
  va_end (ap);
  return bl_fail (err, BL_EDATA, m->path, "'%s': %s", path, msg);
}

/* The response, weights and column labels: named, distinct, the intercept first. */
static int
check_names (const bl_model *m, bl_err *err)
{
  char at[64];
  if (!m->response[0])
    return bad (m, err, "response", "expected the response column's name, got ''");
  if (m->weights && !m->weights[0])
    return bad (m, err, "weights", "expected a column name or null, got ''");
  if (m->intercept && strcmp (m->labels[0], "intercept") != 0)
    return bad (m, err, "columns[0]", "expected 'intercept' (the model has an intercept), got "
                "'%.100s'", m->labels[0]);
  for (size_t j = 0; j < m->p; j++) {
    snprintf (at, sizeof at, "columns[%zu]", j);
    if (!m->labels[j][0])
      return bad (m, err, at, "a column label is empty");
    for (size_t k = 0; k < j; k++)
      if (!strcmp (m->labels[j], m->labels[k]))
        return bad (m, err, at, "'%.100s' repeats columns[%zu]", m->labels[j], k);
  }
  return BL_OK;
}

/* Each categorical column once, named, with its levels distinct and its reference (the level
   without a column) named and not among them. */
static int
check_categorical (const bl_model *m, bl_err *err)
{
  char at[96];
  for (size_t i = 0; i < m->ncat; i++) {
    const bl_model_cat *c = &m->cat[i];
    snprintf (at, sizeof at, "categorical[%zu].column", i);
    if (!c->column[0])
      return bad (m, err, at, "expected a column name, got ''");
    for (size_t k = 0; k < i; k++)
      if (!strcmp (c->column, m->cat[k].column))
        return bad (m, err, at, "'%.100s' repeats categorical[%zu].column", c->column, k);
    if (c->nlevels == 0) {
      snprintf (at, sizeof at, "categorical[%zu].levels", i);
      return bad (m, err, at, "'%.100s' has no level besides its reference", c->column);
    }
    for (size_t k = 0; k < c->nlevels; k++)
      for (size_t l = 0; l < k; l++)
        if (!strcmp (c->levels[k], c->levels[l])) {
          snprintf (at, sizeof at, "categorical[%zu].levels[%zu]", i, k);
          return bad (m, err, at, "level '%.100s' of '%.100s' repeats levels[%zu]",
                      c->levels[k], c->column, l);
        }
    snprintf (at, sizeof at, "categorical[%zu].reference", i);
    if (!c->reference[0])
      return bad (m, err, at, "expected a level, got ''");
    for (size_t k = 0; k < c->nlevels; k++)
      if (!strcmp (c->reference, c->levels[k]))
        return bad (m, err, at, "the reference '%.100s' of '%.100s' is also listed in "
                    "levels[%zu] (the reference level has no column)", c->reference,
                    c->column, k);
  }
  return BL_OK;
}

/* family_par in the family's range (theta > 0; Tweedie 1 < p < 2), null without one; the
   standard-error kind one of bl_se_kind_name's, or pearson (the poisson dispersion). */
static int
check_params (const bl_model *m, bl_err *err)
{
  const char *kinds[BL_SE_CLUSTER + 2];
  char list[160];
  size_t nk = 0, used = 0;
  switch (bl_family_par_kind (m->fam)) {
  case BL_FAMPAR_THETA:
    if (!(m->fam_par > 0.0) || !isfinite (m->fam_par))
      return bad (m, err, "family_par", "the negative binomial's theta must be a positive "
                  "number, got %.17g", m->fam_par);
    break;
  case BL_FAMPAR_POWER:
    if (!(m->fam_par > 1.0 && m->fam_par < 2.0))
      return bad (m, err, "family_par", "the Tweedie power must lie strictly between 1 and "
                  "2, got %.17g", m->fam_par);
    break;
  default:
    if (!isnan (m->fam_par))
      return bad (m, err, "family_par", "expected null: the %s family has no parameter",
                  bl_family_name (m->fam));
  }
  for (int k = 0; k <= (int) BL_SE_CLUSTER; k++)
    kinds[nk++] = bl_se_kind_name ((bl_se_kind) k);
  kinds[nk++] = "pearson";
  for (size_t k = 0; k < nk; k++)
    if (!strcmp (m->se_kind, kinds[k]))
      return BL_OK;
  list[0] = '\0';
  for (size_t k = 0; k < nk && used < sizeof list; k++)
    used += (size_t) snprintf (list + used, sizeof list - used, "%s%s",
                               k == 0 ? "" : k + 1 == nk ? " or " : ", ", kinds[k]);
  return bad (m, err, "se_kind", "expected %s, got '%.100s'", list, m->se_kind);
}

/* The dispersions and counts.  dispersion (phi used in the covariance) >= 0; phi_pearson and
   phi_ml >= 0 or null, and numbers where prediction uses them (phi_pearson for the gaussian
   family and least squares, phi_ml for the other families whose dispersion is estimated);
   rank = the estimated coefficients, rank <= n, rank + dof_resid <= n; dof_wald (G - 1 with
   cluster errors) < n; t intervals need dof_resid >= 1 and dof_wald >= 1; level in (0, 1). */
static int
check_counts (const bl_model *m, bl_err *err)
{
  size_t est = 0;
  const char *fam = bl_family_name (m->fam);
  if (isnan (m->phi_used) || m->phi_used < 0.0)
    return bad (m, err, "dispersion", "expected a number >= 0, got %.17g", m->phi_used);
  if (m->phi_pearson < 0.0)
    return bad (m, err, "phi_pearson", "expected a number >= 0 or null, got %.17g",
                m->phi_pearson);
  if (m->phi_ml < 0.0)
    return bad (m, err, "phi_ml", "expected a number >= 0 or null, got %.17g", m->phi_ml);
  if (isnan (m->phi_pearson) && bl_family_has (m->fam, BL_FAM_NORMAL))
    return bad (m, err, "phi_pearson", "expected a number: intervals of the %s family use it",
                fam);
  if (isnan (m->phi_ml) && bl_family_has (m->fam, BL_FAM_PHI_FREE)
      && !bl_family_has (m->fam, BL_FAM_NORMAL))
    return bad (m, err, "phi_ml", "expected a number: intervals of the %s family use it", fam);
  for (size_t j = 0; j < m->p; j++)
    est += !isnan (m->beta[j]);
  if (m->n == 0)
    return bad (m, err, "n", "expected at least 1 row");
  if (m->rank != est)
    return bad (m, err, "rank", "%zu, but 'coef' has %zu estimated (non-null) coefficients",
                m->rank, est);
  if (m->rank > m->n)
    return bad (m, err, "rank", "%zu is more than the %zu rows ('n')", m->rank, m->n);
  if (m->dof_resid > m->n - m->rank)
    return bad (m, err, "dof_resid", "%zu is more than n - rank = %zu", m->dof_resid,
                m->n - m->rank);
  if (m->wald_is_t && m->dof_resid == 0)
    return bad (m, err, "wald_is_t", "t intervals need dof_resid >= 1, got 0");
  if (m->dof_wald >= m->n)
    return bad (m, err, "dof_wald", "%zu is not less than the %zu rows ('n')", m->dof_wald,
                m->n);
  if (m->wald_is_t && m->dof_wald == 0)
    return bad (m, err, "wald_is_t", "t intervals need dof_wald >= 1, got 0");
  if (!(m->level > 0.0 && m->level < 1.0))
    return bad (m, err, "level", "expected a number in (0, 1), got %.17g", m->level);
  return BL_OK;
}

/* Cholesky factor, in place, of the N x N symmetric block at A (row-major, leading dimension
   LD, lower triangle used): A = L L' (Golub & Van Loan 2013, Matrix Computations, 4th ed.,
   algorithm 4.2.1, the row-oriented form).  Returns N when it exists, else the first column J
   whose pivot is not positive (the leading (J+1) x (J+1) block is not positive definite). */
static size_t
cholesky_block (double *A, size_t n, size_t ld)
{
  for (size_t j = 0; j < n; j++) {
    double *const rj = A + j * ld;
    for (size_t i = 0; i <= j; i++) {
      const double *const ri = A + i * ld;
      double s = rj[i];
      for (size_t k = 0; k < i; k++)
        s -= rj[k] * ri[k];
      if (i < j) {
        rj[i] = s / ri[i];
      } else {
        if (!(s > 0.0))
          return j;
        rj[j] = sqrt (s);
      }
    }
  }
  return n;
}

#define CHOL_BLOCK 96             /* columns per block of the blocked factorization */

/* The same for the Q x Q matrix A (leading dimension Q), blocked (Golub & Van Loan 2013,
   section 4.2.9): each diagonal block factored by cholesky_block, the block column below it
   solved against it (dtrsm) and the trailing matrix updated (dsyrk), so that most of the
   q^3 / 3 operations are BLAS level 3.  Returns Q, or the first column whose pivot is not
   positive. */
static size_t
cholesky (double *A, size_t q)
{
  for (size_t k = 0; k < q; k += CHOL_BLOCK) {
    const size_t b = q - k < CHOL_BLOCK ? q - k : CHOL_BLOCK, rest = q - k - b;
    const size_t j = cholesky_block (A + k * q + k, b, q);
    if (j < b)
      return k + j;
    if (rest == 0)
      break;
    cblas_dtrsm (CblasRowMajor, CblasRight, CblasLower, CblasTrans, CblasNonUnit, (int) rest,
                 (int) b, 1.0, A + k * q + k, (int) q, A + (k + b) * q + k, (int) q);
    cblas_dsyrk (CblasRowMajor, CblasLower, CblasNoTrans, (int) rest, (int) b, -1.0,
                 A + (k + b) * q + k, (int) q, 1.0, A + (k + b) * q + k + b, (int) q);
  }
  return q;
}

/* Positive semi-definite within BL_MODEL_PSD_TOL: the correlation form R = D^-1/2 V D^-1/2
   of the Q coefficients IDX (estimated, with a variance > 0; V symmetrized), shifted by
   delta = BL_MODEL_PSD_TOL Q, has a Cholesky factor, which holds exactly when R's least
   eigenvalue exceeds -delta (R + delta I is then positive definite); Q bounds R's largest
   eigenvalue (its trace), so this is a test relative to it, and the correlation form makes
   it independent of the coefficients' scales. */
static int
check_psd (const bl_model *m, const size_t *idx, size_t q, bl_err *err)
{
  const size_t p = m->p;
  const double delta = BL_MODEL_PSD_TOL * (double) q;
  double *A;
  size_t bad_at;
  if (q == 0)
    return BL_OK;
  if (q > SIZE_MAX / q || !(A = bl_mallocn (q * q, sizeof *A)))
    return bl_fail (err, BL_ENOMEM, m->path, "out of memory checking the covariance");
  for (size_t a = 0; a < q; a++) {
    const size_t j = idx[a];
    const double sj = sqrt (m->cov[j + j * p]);
    for (size_t b = 0; b <= a; b++) {
      const size_t k = idx[b];
      const double v = 0.5 * (m->cov[j + k * p] + m->cov[k + j * p]);
      A[a * q + b] = v / (sj * sqrt (m->cov[k + k * p])) + (a == b ? delta : 0.0);
    }
  }
  bad_at = cholesky (A, q);
  bl_free (A);
  if (bad_at < q)
    return bad (m, err, "cov", "not positive semi-definite: its correlation form has an "
                "eigenvalue below -%g (%g times %zu columns; the Cholesky pivot of column %zu "
                "'%.80s' is not positive)", delta, BL_MODEL_PSD_TOL, q, idx[bad_at],
                m->labels[idx[bad_at]]);
  return BL_OK;
}

/* The covariance of the estimated coefficients: variances >= 0, symmetric within
   BL_MODEL_SYM_TOL max|V|, a row of a zero variance zero, correlations within [-1, 1], and
   positive semi-definite (check_psd).  The null entries of aliased columns were checked as
   the file was read. */
static int
check_cov (const bl_model *m, bl_err *err)
{
  const size_t p = m->p;
  double vmax = 0.0, tol;
  size_t *idx, q = 0;
  char at[64], at2[64];
  int status;
  for (size_t j = 0; j < p * p; j++)
    if (!isnan (m->cov[j]) && fabs (m->cov[j]) > vmax)
      vmax = fabs (m->cov[j]);
  tol = BL_MODEL_SYM_TOL * vmax;
  for (size_t j = 0; j < p; j++) {
    const double vjj = m->cov[j + j * p];
    if (isnan (m->beta[j]))
      continue;
    snprintf (at, sizeof at, "cov[%zu][%zu]", j, j);
    if (vjj < 0.0)
      return bad (m, err, at, "a variance must be >= 0, got %.17g", vjj);
    if (m->phi_used == 0.0 && vjj != 0.0)
      return bad (m, err, at, "%.17g, but the dispersion is 0 (a perfect fit has no "
                  "variance)", vjj);
    for (size_t k = 0; k < j; k++) {
      const double vjk = m->cov[j + k * p], vkj = m->cov[k + j * p];
      const double vkk = m->cov[k + k * p];
      if (isnan (m->beta[k]))
        continue;
      snprintf (at, sizeof at, "cov[%zu][%zu]", j, k);
      snprintf (at2, sizeof at2, "cov[%zu][%zu]", k, j);
      if (fabs (vjk - vkj) > tol)
        return bad (m, err, at, "not symmetric: %.17g against %s = %.17g (more than %g "
                    "max|V| apart)", vjk, at2, vkj, BL_MODEL_SYM_TOL);
      if ((vjj == 0.0 || vkk == 0.0) && fabs (vjk) > tol)
        return bad (m, err, at, "%.17g, but a coefficient of zero variance has zero "
                    "covariances", vjk);
      if (vjj > 0.0 && vkk > 0.0
          && fabs (vjk) / (sqrt (vjj) * sqrt (vkk)) > 1.0 + BL_MODEL_PSD_TOL)
        return bad (m, err, at, "not positive semi-definite: the correlation of columns %zu "
                    "and %zu is %.17g, outside [-1, 1]", j, k,
                    vjk / (sqrt (vjj) * sqrt (vkk)));
    }
  }
  if (!(idx = bl_mallocn (p, sizeof *idx)))
    return bl_fail (err, BL_ENOMEM, m->path, "out of memory checking the covariance");
  for (size_t j = 0; j < p; j++)
    if (!isnan (m->beta[j]) && m->cov[j + j * p] > 0.0)
      idx[q++] = j;
  status = check_psd (m, idx, q, err);
  bl_free (idx);
  return status;
}

/* The smearing summaries of a transformed model (Duan 1983, JASA 78, 605-610): n the fit's
   rows, the stride the writer uses (ceil(n / BL_MODEL_RESIDUALS_MAX) above that many rows,
   else 1), and what every set of residuals satisfies, each within BL_MODEL_SMEAR_TOL:
   mean_exp > 0 and mean_exp >= exp(mean) (Jensen's inequality), mean_sq >= mean^2 (a
   variance is >= 0), min <= mean and min <= every kept residual; with every residual kept
   (stride 1), min is the least and mean their mean. */
static int
check_smearing (const bl_model *m, bl_err *err)
{
  const size_t n = m->smear_n;
  const size_t stride = n > BL_MODEL_RESIDUALS_MAX
                        ? (n + BL_MODEL_RESIDUALS_MAX - 1) / BL_MODEL_RESIDUALS_MAX : 1;
  const double t = BL_MODEL_SMEAR_TOL, mean = m->smear_mean;
  const double scale = sqrt (fabs (m->smear_mean_sq)) + fabs (mean);
  double least = HUGE_VAL;
  long double sum = 0.0L;
  if (m->tr == BL_TRANSFORM_NONE)
    return BL_OK;
  if (n != m->n)
    return bad (m, err, "smearing.n", "%zu residuals, but the fit has %zu rows ('n')", n, m->n);
  if (m->smear_stride != stride)
    return bad (m, err, "smearing.stride", "%zu, but n = %zu gives the stride %zu",
                m->smear_stride, n, stride);
  if (!(m->smear_mean_exp > 0.0))
    return bad (m, err, "smearing.mean_exp", "a mean of exp(e) must be > 0, got %.17g",
                m->smear_mean_exp);
  if (m->smear_mean_exp < exp (mean) * (1.0 - t))
    return bad (m, err, "smearing.mean_exp", "%.17g is below exp(mean) = %.17g (the mean of "
                "exp(e) is at least exp of the mean of e)", m->smear_mean_exp, exp (mean));
  if (m->smear_mean_sq < mean * mean * (1.0 - t))
    return bad (m, err, "smearing.mean_sq", "%.17g is below mean^2 = %.17g", m->smear_mean_sq,
                mean * mean);
  if (m->smear_min > mean + t * scale)
    return bad (m, err, "smearing.min", "%.17g is above the mean %.17g", m->smear_min, mean);
  for (size_t i = 0; i < m->nres; i++) {
    if (m->res[i] < m->smear_min - t * scale) {
      char at[64];
      snprintf (at, sizeof at, "smearing.residuals[%zu]", i);
      return bad (m, err, at, "%.17g is below the least residual 'min' %.17g", m->res[i],
                  m->smear_min);
    }
    least = fmin (least, m->res[i]);
    sum += m->res[i];
  }
  if (stride == 1 && least > m->smear_min + t * scale)
    return bad (m, err, "smearing.min", "%.17g, but the least of the %zu residuals is %.17g",
                m->smear_min, n, least);
  if (stride == 1 && fabs ((double) (sum / (long double) n) - mean) > 1e3 * t * scale)
    return bad (m, err, "smearing.mean", "%.17g, but the %zu residuals have the mean %.17g",
                mean, n, (double) (sum / (long double) n));
  return BL_OK;
}

int
bl_model_check (const bl_model *m, bl_err *err)
{
  int status;
  if ((status = check_names (m, err)) != BL_OK || (status = check_categorical (m, err)) != BL_OK
      || (status = check_params (m, err)) != BL_OK || (status = check_counts (m, err)) != BL_OK
      || (status = check_cov (m, err)) != BL_OK || (status = check_smearing (m, err)) != BL_OK)
    return status;
  return BL_OK;
}
