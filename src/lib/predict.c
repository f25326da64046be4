/* predict.c -- a model read back applied to new rows: means with confidence intervals, and
   prediction intervals for a new observation (bl_model_predict, bl_prediction_free).

   Prediction rebuilds the design of the fit on the new table with the saved categorical
   levels fixed (bl_design_levels), so that the columns and
   labels are those of the fit whatever levels the new data happen to hold, and computes

     eta_i = x_i'b + offset_i,  se_i = sqrt(x_i' V x_i)   (V the saved covariance; aliased
                                                           coefficients count as 0)

   Intervals (q = t quantile on dof_wald when the fit's Wald statistics were t, else the
   normal quantile, at (1 + level) / 2):
   - mean, GLM and least squares: g^-1(eta -/+ q se), the Wald interval on the link scale
     mapped back (McCullagh & Nelder 1989, Generalized Linear Models, 2nd ed., section 4.4;
     for the identity link this is x'b -/+ t se);
   - mean, transformed response: Duan's (1983, JASA 78, 605-610) smeared mean
     m(xb) = (1/n) sum h^-1(xb + e_i) - shift, with a delta-method interval that takes in
     both the coefficients' and the smearing mean's uncertainty (smear_variance below);
   - new observation, gaussian (OLS, WLS, gaussian GLM): mu -/+ t sqrt(s^2 v / a + (dmu/deta)^2
     se^2), s^2 the Pearson dispersion, v the variance function's value (1; x^K; mu^K) and
     a the prior weight (the textbook interval: e.g. Draper & Smith 1998, Applied Regression
     Analysis, 3rd ed., section 3.2, for the identity link);
   - new observation, transformed response: the transformed-scale interval above mapped back
     by the naive inverse h^-1(z) - shift, which is monotone;
   - new observation, poisson: the alpha/2 and 1 - alpha/2 quantiles of Poisson(mu); gamma:
     of Gamma(shape a / phi, scale mu phi / a); inverse gaussian: of IG(mu, lambda = a / phi),
     phi the ML dispersion; each family's quantile hook (family_*.c) computes them.  These
     treat mu and phi as known: parameter uncertainty is not included (common practice, no
     source). */
#include <float.h>
#include <limits.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include "alloc.h"
#include "design.h"
#include "model_impl.h"
#include "rowblock.h"

#define BLOCK 256                 /* rows of X filled at a time */

void
bl_prediction_free (bl_prediction *p)
{
  if (!p)
    return;
  bl_free (p->mean);
  bl_free (p->mean_lo);
  bl_free (p->mean_hi);
  bl_free (p->pred_lo);
  bl_free (p->pred_hi);
  bl_free (p->median);
  bl_free (p);
}

/* "FILE:LINE" of table row R. */
static void
row_where (const bl_table *t, size_t r, char *buf, size_t cap)
{
  snprintf (buf, cap, "%s:%zu", bl_table_source (t), bl_table_line (t, r));
}

/* The line of the first non-missing cell of categorical column J (the cell that made it
   categorical), for messages. */
static size_t
first_text_line (const bl_table *t, size_t j, size_t *row)
{
  const int32_t *codes = bl_table_codes (t, j);
  for (size_t r = 0; r < bl_table_nrows (t); r++)
    if (codes[r] >= 0) {
      *row = r;
      return bl_table_line (t, r);
    }
  *row = 0;
  return 1;
}

static int
is_model_cat (const bl_model *m, const char *name)
{
  for (size_t i = 0; i < m->ncat; i++)
    if (strcmp (m->cat[i].column, name) == 0)
      return 1;
  return 0;
}

/* Check that the column NAME, which USE needs, is in T with the model's type. */
static int
check_column (const bl_model *m, const bl_table *t, const char *name, const char *use,
              bl_err *err)
{
  const long j = bl_table_find (t, name);
  char w[1100];
  if (j < 0) {
    snprintf (w, sizeof w, "%s:1", bl_table_source (t));
    return bl_fail (err, BL_EDATA, w, "no column '%s', which the model needs (%s)", name, use);
  }
  if (is_model_cat (m, name) && bl_table_is_numeric (t, (size_t) j)) {
    snprintf (w, sizeof w, "%s:1", bl_table_source (t));
    return bl_fail (err, BL_EDATA, w, "'%s' is categorical in the model but was read as "
                    "numbers (read the table with bl_model_table_opts)", name);
  }
  if (!is_model_cat (m, name) && !bl_table_is_numeric (t, (size_t) j)) {
    /* The saved model fixes the column's type: the reader's majority rule made it
       categorical, so its first cell that is not a number is named (numbers among its
       cells are levels now, and not what went wrong). */
    size_t nlab, nnum, line, col;
    const char *text;
    if (bl_table_typed_by_cells (t, (size_t) j, &nlab, &nnum, &line, &col, &text)) {
      snprintf (w, sizeof w, "%s:%zu:%zu", bl_table_source (t), line, col);
      return bl_fail (err, BL_EDATA, w, "'%s' is numeric in the model, but this cell is not a "
                      "number: '%s' (%zu of the column's %zu non-missing cells are not)", name,
                      text, nlab, nlab + nnum);
    } else {
      size_t r;
      const size_t ln = first_text_line (t, (size_t) j, &r);
      snprintf (w, sizeof w, "%s:%zu", bl_table_source (t), ln);
      return bl_fail (err, BL_EDATA, w, "'%s' is numeric in the model, but was declared "
                      "categorical: '%s'", name,
                      bl_table_level (t, (size_t) j, (size_t) bl_table_codes (t, (size_t) j)[r]));
    }
  }
  return BL_OK;
}

static int
check_leaves (const bl_model *m, const bl_table *t, const bl_term *term, const char *use,
              bl_err *err)
{
  int status;
  if (term->kind == BL_TERM_COL)
    return check_column (m, t, term->name, use, err);
  status = check_leaves (m, t, term->a, use, err);
  if (status == BL_OK && term->b)
    status = check_leaves (m, t, term->b, use, err);
  return status;
}

/* Every column the model needs is in T, with its type. */
static int
check_columns (const bl_model *m, const bl_table *t, bl_err *err)
{
  char use[600];
  int status = BL_OK;
  for (size_t i = 0; i < bl_terms_count (m->terms) && status == BL_OK; i++) {
    const bl_term *term = bl_terms_get (m->terms, i);
    snprintf (use, sizeof use, "term '%s'", term->label);
    status = check_leaves (m, t, term, use, err);
  }
  if (status == BL_OK && m->offset) {
    snprintf (use, sizeof use, "offset '%s'", bl_terms_get (m->offset, 0)->label);
    status = check_leaves (m, t, bl_terms_get (m->offset, 0), use, err);
  }
  if (status == BL_OK && m->var_kind == BL_VARIANCE_COLUMN) {
    snprintf (use, sizeof use, "variance function '%s^K'", m->var_col);
    status = check_column (m, t, m->var_col, use, err);
  }
  /* optional columns: present ones must be numeric */
  if (status == BL_OK && m->weights && bl_table_find (t, m->weights) >= 0)
    status = check_column (m, t, m->weights, "weights", err);
  if (status == BL_OK && bl_table_find (t, m->response) >= 0)
    status = check_column (m, t, m->response, "the response, for the scores", err);
  return status;
}

/* h^-1(z) for the model's transform, before the shift is undone (as transform.c). */
static double
inverse_transform (const bl_model *m, double z)
{
  switch (m->tr) {
  case BL_TRANSFORM_LOG: return exp (z);
  case BL_TRANSFORM_SQRT: return z > 0.0 ? z * z : 0.0;
  case BL_TRANSFORM_BOXCOX:
    if (m->lambda == 0.0)
      return exp (z);
    {
      const double u = fma (m->lambda, z, 1.0);   /* 1 + L z rounded once */
      if (u <= 0.0)
        return m->lambda > 0.0 ? 0.0 : HUGE_VAL;
      return exp (log (u) / m->lambda);
    }
  default: return z;
  }
}

/* d h^-1(z) / dz, 0 outside the range of h. */
static double
inverse_transform_deriv (const bl_model *m, double z)
{
  switch (m->tr) {
  case BL_TRANSFORM_LOG: return exp (z);
  case BL_TRANSFORM_SQRT: return z > 0.0 ? 2.0 * z : 0.0;
  case BL_TRANSFORM_BOXCOX:
    if (m->lambda == 0.0)
      return exp (z);
    {
      const double u = fma (m->lambda, z, 1.0);   /* (1 + L z)^(1/L - 1) */
      return u > 0.0 ? exp ((1.0 / m->lambda - 1.0) * log (u)) : 0.0;
    }
  default: return 1.0;
  }
}

/*
 * Duan's smeared mean at XB and its derivative in XB, computed as bl_fit_backtransform
 * (transform.c) does: closed forms over all the fit's residuals for log
 * (exp(xb) mean(exp e)) and sqrt (xb^2 + 2 xb mean(e) + mean(e^2), when xb + e >= 0 for every
 * e), otherwise the mean over the kept residuals.
 */
static void
smeared (const bl_model *m, double xb, double *mean, double *deriv)
{
  long double s = 0.0L, ds = 0.0L;
  if (m->tr == BL_TRANSFORM_LOG) {
    *mean = exp (xb) * m->smear_mean_exp - m->shift;
    *deriv = exp (xb) * m->smear_mean_exp;
    return;
  }
  if (m->tr == BL_TRANSFORM_SQRT && xb + m->smear_min >= 0.0) {
    *mean = (double) ((long double) xb * xb + 2.0L * xb * (long double) m->smear_mean
                      + (long double) m->smear_mean_sq) - m->shift;
    *deriv = 2.0 * xb + 2.0 * m->smear_mean;
    return;
  }
  for (size_t i = 0; i < m->nres; i++) {
    s += inverse_transform (m, xb + m->res[i]);
    ds += inverse_transform_deriv (m, xb + m->res[i]);
  }
  *mean = (double) (s / (long double) m->nres) - m->shift;
  *deriv = (double) (ds / (long double) m->nres);
}

/*
 * The prediction interval [*LO, *HI] of a new observation at mean MU, linear predictor ETA
 * with standard error SE, prior weight A and variance function value V (1 unless the
 * family is normal): the one place that dispatches on the family for it (see the head of
 * this file for the formulas).  The normal interval takes the coefficients' uncertainty in;
 * the others are the alpha/2 and 1 - alpha/2 quantiles of the family at mu and the ML
 * dispersion, taken as known (bl_family_quantile).
 * BL_OK, or BL_EDATA (where = W) when the mean is out of reach of the quantile.
 */
static int
quantile_row (const bl_model *m, double q, double alpha, double eta, double mu, double se,
              double a, double v, const char *w, double *lo, double *hi, bl_err *err)
{
  const bl_family *f = m->fam;
  const double p1 = alpha / 2.0;   /* each end's tail probability; the upper end from the
                                      upper tail, never at 1 - alpha/2, which rounds */
  if (bl_family_has (f, BL_FAM_NORMAL)) {
    const double dmu = m->link->dmu_deta (eta);
    const double sp = sqrt (m->phi_pearson * v / a + dmu * dmu * se * se);
    *lo = mu - q * sp;
    *hi = mu + q * sp;
  } else {
    /* the family's own quantiles (the quantile hook of its descriptor) */
    if (mu > bl_family_quantile_mu_max (f))
      return bl_fail (err, BL_EDATA, w, "the predicted mean %g is too large for %s "
                      "quantiles", mu, bl_family_noun (f));
    *lo = bl_family_quantile (f, p1, mu, a, m->phi_ml, m->fam_par);
    *hi = bl_family_quantile_upper (f, p1, mu, a, m->phi_ml, m->fam_par);
  }
  return BL_OK;
}

static bl_prediction *
prediction_new (size_t n)
{
  bl_prediction *p = bl_calloc (1, sizeof *p);
  if (!p)
    return NULL;
  p->n = n;
  p->mean = bl_mallocn (n ? n : 1, sizeof (double));
  p->mean_lo = bl_mallocn (n ? n : 1, sizeof (double));
  p->mean_hi = bl_mallocn (n ? n : 1, sizeof (double));
  p->pred_lo = bl_mallocn (n ? n : 1, sizeof (double));
  p->pred_hi = bl_mallocn (n ? n : 1, sizeof (double));
  p->median = bl_mallocn (n ? n : 1, sizeof (double));
  if (!p->mean || !p->mean_lo || !p->mean_hi || !p->pred_lo || !p->pred_hi || !p->median) {
    bl_prediction_free (p);
    return NULL;
  }
  p->deviance = p->rmse = p->mae = NAN;
  return p;
}

/* The new-data design for M on T: every row, in order, with the fit's columns. */
/* The design D built for M on NROWS rows has the fit's columns, with its labels.  BL_OK, or
   BL_EDATA (where = the model file) naming the first difference. */
static int
check_labels (const bl_model *m, const bl_design *d, size_t nrows, bl_err *err)
{
  if (bl_design_p (d) != m->p || bl_design_n (d) != nrows)
    return bl_fail (err, BL_EDATA, m->path, "inconsistent model: its terms give %zu columns, "
                    "but 'columns' lists %zu", bl_design_p (d), m->p);
  for (size_t j = 0; j < m->p; j++)
    if (strcmp (bl_design_label (d, j), m->labels[j]) != 0)
      return bl_fail (err, BL_EDATA, m->path, "inconsistent model: its terms give column "
                      "'%s' where 'columns' has '%s'", bl_design_label (d, j), m->labels[j]);
  return BL_OK;
}

/* The new-data design for M on T: every row, in order, with the fit's columns. */
static bl_design *
new_design (const bl_model *m, const bl_table *t, bl_err *err)
{
  bl_design_opts o;
  bl_design *d;
  if (check_columns (m, t, err) != BL_OK)
    return NULL;
  bl_design_opts_init (&o);
  o.intercept = m->intercept;
  o.levels = m->dl;
  o.n_levels = m->ncat;
  o.weights = m->weights && bl_table_find (t, m->weights) >= 0 ? m->weights : NULL;
  o.offset = m->offset;
  o.variance = m->var_kind == BL_VARIANCE_COLUMN ? m->var_col : NULL;
  o.response_optional = 1;
  o.missing_error = 1;
  d = bl_design_new (t, m->response, m->terms, &o, err);
  if (!d) {
    if (err && err->code == BL_ESPEC)      /* the model is fine, so the data are at fault */
      err->code = BL_EDATA;
    return NULL;
  }
  if (check_labels (m, d, bl_table_nrows (t), err) != BL_OK) {
    bl_design_free (d);
    return NULL;
  }
  return d;
}

/* One prediction pass over the new rows: the model, the new design's columns, the interval
   quantile and the running scores. */
typedef struct pass {
  const bl_model *m;
  const bl_table *t;
  const bl_design *d;
  const double *off, *y, *aw, *vc;    /* offset, response, prior weights, variance column */
  double alpha, q;
  bl_prediction *pr;
  long double dev, sse, sae;
  size_t nscore;
} pass;

/* eta = x'b + OFF and se = sqrt(x' V x) for row I of the block X (BLOCK rows a column);
   aliased coefficients count as 0. */
static void
linear_row (const bl_model *m, const double *X, size_t i, double off, double *eta,
            double *se)
{
  const size_t p = m->p;
  long double xb = 0.0L, xvx = 0.0L;
  for (size_t j = 0; j < p; j++)
    if (!isnan (m->beta[j]))
      xb += (long double) X[j * BLOCK + i] * m->beta[j];
  for (size_t j = 0; j < p; j++) {
    long double s = 0.0L;
    if (isnan (m->beta[j]))
      continue;
    for (size_t k = 0; k < p; k++)
      if (!isnan (m->beta[k]))
        s += (long double) m->cov[j + k * p] * X[k * BLOCK + i];
    xvx += s * X[j * BLOCK + i];
  }
  *eta = (double) xb + off;
  *se = xvx > 0.0L ? sqrt ((double) xvx) : 0.0;
}

/*
 * The variance of Duan's smeared mean m(xb) = (1/n) sum h^-1(xb + e_i) (Duan 1983, JASA 78,
 * 605-610), by the delta method over both sources: the coefficients and the smearing mean.
 * With e_i = eps_i - x_i'(b^ - b), m^ - m is to first order D x0'd + (S0 - S) - D xbar'd,
 * where d = b^ - b, D = m'(xb) = (1/n) sum (h^-1)'(xb + e_i), S0 the mean over the true
 * errors and xbar the mean row of X.  With an intercept, (X'X)^-1 X'1 is the unit vector of the intercept, so
 * Cov(d, S0) = c e_1 / n (c = Cov(eps, h^-1(xb + eps))) and (x0 - xbar)'e_1 = 0: the cross
 * term vanishes, xbar' V xbar = s^2 / n and x0' V xbar = s^2 / n, leaving
 *   Var m^ = D^2 (se^2 - s^2 / n) + var_i h^-1(xb + e_i) / n,
 * se^2 = x0' V x0 and s^2 the residual variance (phi_pearson).  For the log,
 * Var(log m^) = se^2 + (var(exp e) / mean(exp e)^2 - s^2) / n.  Without an intercept the
 * cross term does not reduce, and the two variances are added without it (an
 * approximation; doc/methods.md, section 10).  The variance over i is taken over the kept
 * residuals (all of them up to BL_MODEL_RESIDUALS_MAX, else every stride-th).  Derivation:
 * the delta method (Casella & Berger 2002, Statistical Inference, section 5.5.4) applied to
 * the smearing estimate; the result agrees with Duan's own large-sample variance of the
 * smearing estimate (1983, section 4, from memory).
 */
static double
smear_variance (const bl_model *m, double xb, double deriv, double se)
{
  const double n = (double) (m->smear_n ? m->smear_n : m->nres);
  long double s1 = 0.0L, s2 = 0.0L, mean;
  double vh, lin;
  for (size_t i = 0; i < m->nres; i++)
    s1 += inverse_transform (m, xb + m->res[i]);
  mean = s1 / (long double) m->nres;
  for (size_t i = 0; i < m->nres; i++) {
    const long double dv = (long double) inverse_transform (m, xb + m->res[i]) - mean;
    s2 += dv * dv;
  }
  vh = m->nres > 1 ? (double) (s2 / (long double) (m->nres - 1)) : 0.0;
  lin = se * se - (m->intercept ? m->phi_pearson / n : 0.0);
  if (lin < 0.0)
    lin = 0.0;
  return deriv * deriv * lin + vh / n;
}

/* Transformed response: the smeared mean with its delta-method interval, and the
   transformed-scale interval mapped back; the median is the naive back-transform.  For the
   log the mean interval is formed on the log scale, m exp(-/+ q sd(log m^)), which keeps it
   positive and follows the skew of m^; for the others m -/+ q sd(m^). */
static int
transformed_row (const pass *ps, size_t row, double eta, double se, double a, const char *w,
                 bl_err *err)
{
  const bl_model *m = ps->m;
  bl_prediction *pr = ps->pr;
  const double q = ps->q, sp = sqrt (m->phi_pearson / a + se * se);
  double mu, deriv, var;
  smeared (m, eta, &mu, &deriv);
  var = smear_variance (m, eta, deriv, se);
  pr->mean[row] = mu;
  if (m->tr == BL_TRANSFORM_LOG && mu + m->shift > 0.0) {
    const double sdl = sqrt (var) / (mu + m->shift);
    pr->mean_lo[row] = (mu + m->shift) * exp (-q * sdl) - m->shift;
    pr->mean_hi[row] = (mu + m->shift) * exp (q * sdl) - m->shift;
  } else {
    pr->mean_lo[row] = mu - q * sqrt (var);
    pr->mean_hi[row] = mu + q * sqrt (var);
  }
  pr->pred_lo[row] = inverse_transform (m, eta - q * sp) - m->shift;
  pr->pred_hi[row] = inverse_transform (m, eta + q * sp) - m->shift;
  pr->median[row] = inverse_transform (m, eta) - m->shift;
  /* A back-transform beyond a double (exp of a linear predictor above 709, or a Box-Cox
     power past its bound 1 + L z > 0 under the smearing residuals) has no mean to report:
     a reason, not inf or an empty cell.  An interval end may be unbounded (inf). */
  if (!isfinite (mu) || isnan (pr->mean_lo[row]) || isnan (pr->mean_hi[row])
      || isnan (pr->pred_lo[row]) || isnan (pr->pred_hi[row])) {
    char s[32];
    bl_format_shortest (eta, s);
    return bl_fail (err, BL_EDATA, w, "the predicted mean of '%s' at the transformed-scale "
                    "linear predictor %s is out of range for double precision (its "
                    "back-transform is %g)", m->response, s, mu);
  }
  return BL_OK;
}

/* The variance function's value *V at row ROW with mean MU: x^K of the variance column VC,
   or mu^K, or 1 without one.  BL_OK, or BL_EDATA (where = W) when mu^K has no value. */
static int
variance_value (const bl_model *m, const double *vc, size_t row, double mu, const char *w,
                double *v, bl_err *err)
{
  *v = 1.0;
  if (m->var_kind == BL_VARIANCE_COLUMN) {
    *v = exp (m->power * log (vc[row]));
  } else if (m->var_kind == BL_VARIANCE_FITTED) {
    if (!(mu > 0.0)) {
      char s[32];
      bl_format_shortest (mu, s);
      return bl_fail (err, BL_EDATA, w, "the predicted mean %s is not > 0, so the variance "
                      "function fitted^K has no value", s);
    }
    *v = exp (m->power * log (mu));
  }
  return BL_OK;
}

/* Row ROW's contribution to the deviance of a GLM or least-squares model: (a / v) (y - mu)^2
   for the normal family, else a d(y, mu) once y is checked against the support. */
static int
score_link_row (pass *ps, size_t row, double mu, double a, double v, const char *w,
                bl_err *err)
{
  const bl_model *m = ps->m;
  const double *y = ps->y;
  if (!y || isnan (y[row]))
    return BL_OK;
  if (bl_family_has (m->fam, BL_FAM_NORMAL)) {
    ps->dev += (long double) (a / v) * (y[row] - mu) * (y[row] - mu);
    return BL_OK;
  }
  if (!bl_family_y_ok (m->fam, y[row])) {
    char s[32];
    bl_format_shortest (y[row], s);
    return bl_fail (err, BL_EDATA, w, "'%s' value %s is outside the %s family's support "
                    "(%s)", m->response, s, bl_family_name (m->fam), bl_family_support (m->fam));
  }
  ps->dev += (long double) a * bl_family_dev (m->fam, y[row], mu, m->fam_par);
  return BL_OK;
}

/* GLM and least squares: the mean g^-1(eta) with g^-1 of the Wald interval on the link
   scale, the prediction interval (quantile_row) and the row's deviance.  BL_OK, or BL_EDATA
   (where = W) when the row has no valid mean, variance or quantile, or y is off the
   support. */
static int
link_row (pass *ps, size_t row, double eta, double se, double a, const char *w, bl_err *err)
{
  const bl_model *m = ps->m;
  bl_prediction *pr = ps->pr;
  const double lo = eta - ps->q * se, hi = eta + ps->q * se;
  double e1 = m->link->ginv (lo), e2 = m->link->ginv (hi), mu, v = 1.0;
  int status;
  pr->median[row] = NAN;
  if (m->link == &bl_link_inverse && !(lo * hi > 0.0)) {
    /* the interval for 1/mu reaches 0: the one for mu is unbounded on one side */
    e1 = eta > 0.0 ? HUGE_VAL : -HUGE_VAL;
    e2 = m->link->ginv (eta > 0.0 ? hi : lo);
  }
  if (!m->link->valid_eta (eta) || !bl_family_mu_ok (m->fam, mu = m->link->ginv (eta))) {
    char s[32];
    bl_format_shortest (eta, s);
    return bl_fail (err, BL_EDATA, w, "the linear predictor %s gives no valid mean of the %s "
                    "family with the %s link", s, bl_family_name (m->fam), m->link->name);
  }
  pr->mean[row] = mu;
  pr->mean_lo[row] = e1 < e2 ? e1 : e2;
  pr->mean_hi[row] = e1 < e2 ? e2 : e1;
  if (bl_family_has (m->fam, BL_FAM_NORMAL)
      && (status = variance_value (m, ps->vc, row, mu, w, &v, err)) != BL_OK)
    return status;
  status = quantile_row (m, ps->q, ps->alpha, eta, mu, se, a, v, w, &pr->pred_lo[row],
                         &pr->pred_hi[row], err);
  if (status != BL_OK)
    return status;
  return score_link_row (ps, row, mu, a, v, w, err);
}

/* Row ROW (row I of the block X): its mean, intervals and median, and the scores. */
static int
predict_row (pass *ps, const double *X, size_t i, size_t row, bl_err *err)
{
  const bl_model *m = ps->m;
  const double a = ps->aw ? ps->aw[row] : 1.0;
  double eta, se;
  char w[1100];
  int status;
  linear_row (m, X, i, ps->off ? ps->off[row] : 0.0, &eta, &se);
  row_where (ps->t, bl_design_table_row (ps->d, row), w, sizeof w);
  if (m->tr != BL_TRANSFORM_NONE) {
    if ((status = transformed_row (ps, row, eta, se, a, w, err)) != BL_OK)
      return status;
  } else if ((status = link_row (ps, row, eta, se, a, w, err)) != BL_OK) {
    return status;
  }
  if (ps->y && !isnan (ps->y[row])) {
    const double e = ps->y[row] - ps->pr->mean[row];
    if (m->tr != BL_TRANSFORM_NONE)
      ps->dev += (long double) a * e * e;
    ps->sse += (long double) e * e;
    ps->sae += fabs (e);
    ps->nscore++;
  }
  return BL_OK;
}

bl_prediction *
bl_model_predict (const bl_model *m, const bl_table *t, double level, bl_err *err)
{
  pass ps = { 0 };
  bl_design *d;
  double *X = NULL;
  size_t n;
  int status = BL_OK;

  if (level == 0.0 || isnan (level))
    level = m->level;
  if (!(level > 0.0 && level < 1.0)) {
    bl_fail (err, BL_ESPEC, "--level", "expected a number in (0, 1), got %g", level);
    return NULL;
  }
  if (!(d = new_design (m, t, err)))
    return NULL;
  n = bl_design_n (d);
  ps.pr = prediction_new (n);
  X = bl_mallocn (BLOCK * m->p, sizeof *X);
  if (!ps.pr || !X) {
    status = bl_fail (err, BL_ENOMEM, "predict", "out of memory for %zu predictions", n);
    goto done;
  }
  ps.m = m;
  ps.t = t;
  ps.d = d;
  ps.alpha = 1.0 - level;
  /* q: t on the fit's reference dof (dof_resid, or G - 1 with cluster standard errors)
     when its Wald statistics are t (phi estimated or cluster), else normal. */
  /* q from the upper tail alpha/2 (1 - alpha/2 rounds to 1 at a level of 1 - 1e-17) */
  ps.q = m->wald_is_t && m->dof_wald > 0 ? gsl_cdf_tdist_Qinv (ps.alpha / 2.0,
                                                               (double) m->dof_wald)
                                          : gsl_cdf_ugaussian_Qinv (ps.alpha / 2.0);
  ps.off = bl_design_offset (d);
  ps.y = bl_design_y (d);
  ps.aw = bl_design_prior_w (d);
  ps.vc = bl_design_varcol (d);
  for (bl_rowblock rb = bl_rowblock_first (0, n, BLOCK); bl_rowblock_more (&rb) && status == BL_OK;
       bl_rowblock_next (&rb)) {
    bl_design_fill (d, rb.row0, rb.n, X, BLOCK);
    for (size_t i = 0; i < rb.n && status == BL_OK; i++)
      status = predict_row (&ps, X, i, rb.row0 + i, err);
  }
  if (status == BL_OK && ps.nscore) {
    ps.pr->has_response = 1;
    ps.pr->n_scored = ps.nscore;
    ps.pr->deviance = (double) ps.dev;
    ps.pr->rmse = sqrt ((double) (ps.sse / (long double) ps.nscore));
    ps.pr->mae = (double) (ps.sae / (long double) ps.nscore);
  }
done:
  bl_free (X);
  bl_design_free (d);
  if (status != BL_OK) {
    bl_prediction_free (ps.pr);
    return NULL;
  }
  return ps.pr;
}
