/* fit_result.c -- the result object bl_fit: its options' defaults, construction and
   freeing, the setters the engines share (the Wald table, the log-likelihood and the
   information criteria), and the accessors.  The lowest layer of the fitting modules: it
   calls no engine. */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include "family_tails.h"
#include "alloc.h"
#include "fit_impl.h"

void
bl_fit_opts_init (bl_fit_opts *opt)
{
  opt->method = BL_METHOD_GLM;
  opt->fam = NULL;
  opt->link = NULL;
  opt->level = BL_FIT_LEVEL;
  opt->dispersion_pearson = 0;
  opt->se = BL_SE_MODEL;
  opt->transform = BL_TRANSFORM_NONE;
  opt->lambda_est = 0;
  opt->lambda = 1.0;
  opt->shift_given = 0;
  opt->shift = 0.0;
  opt->variance = BL_VARIANCE_NONE;
  opt->variance_col = NULL;
  opt->cluster_col = NULL;
  opt->power_est = 0;
  opt->power = 0.0;
  opt->wls_max_iter = BL_WLS_MAX_ITER;
  opt->fam_par = NAN;
  opt->fam_par_est = 1;
  bl_irls_opts_init (&opt->irls);
}

const char *
bl_method_name (bl_method m)
{
  switch (m) {
  case BL_METHOD_OLS: return "ols";
  case BL_METHOD_WLS: return "wls";
  default: return "glm";
  }
}

const char *
bl_se_kind_name (bl_se_kind k)
{
  static const char *const names[] = { "model", "hc0", "hc1", "hc2", "hc3", "cluster" };
  return (unsigned) k < 6 ? names[k] : "model";
}

void
bl_fit_free (bl_fit *f)
{
  if (!f)
    return;
  bl_free (f->beta);
  bl_free (f->se);
  bl_free (f->wald);
  bl_free (f->pval);
  bl_free (f->log10p);
  bl_free (f->lo);
  bl_free (f->hi);
  bl_free (f->cov);
  bl_free (f->mu);
  bl_free (f->eta);
  bl_free (f->aliased);
  bl_free (f->y_own);
  bl_free (f->a_own);
  bl_free (f->prof_lambda);
  bl_free (f->prof_loglik);
  bl_free (f->cov_unscaled);
  bl_free (f->w);
  bl_warnings_clear (&f->warn);
  bl_free (f);
}


static int
alloc_tables (bl_fit *f)
{
  const size_t p = f->p, n = f->n;
  f->beta = bl_mallocn (p, sizeof (double));
  f->se = bl_mallocn (p, sizeof (double));
  f->wald = bl_mallocn (p, sizeof (double));
  f->pval = bl_mallocn (p, sizeof (double));
  f->log10p = bl_mallocn (p, sizeof (double));
  f->lo = bl_mallocn (p, sizeof (double));
  f->hi = bl_mallocn (p, sizeof (double));
  f->cov = bl_mallocn (p * p, sizeof (double));
  f->aliased = bl_calloc (p, sizeof (int));
  f->mu = bl_mallocn (n, sizeof (double));
  f->eta = bl_mallocn (n, sizeof (double));
  f->cov_unscaled = bl_mallocn (p * p, sizeof (double));
  f->w = bl_mallocn (n, sizeof (double));
  return f->cov_unscaled && f->w && f->beta && f->se && f->wald && f->pval && f->log10p && f->lo && f->hi
         && f->cov && f->aliased
         && f->mu && f->eta;
}

/* A new result for design D with response Y and prior weights A (NULL: the design's own,
   else copied), every table allocated and every figure "not computed".  NULL with ERR set
   (BL_ENOMEM) when memory runs out. */
bl_fit *
bl_fit_result_new (const bl_design *d, const double *y, const double *a, const bl_fit_opts *opt,
                   const bl_family *fam, const bl_link *lnk, bl_err *err)
{
  bl_fit *f;
  f = bl_calloc (1, sizeof *f);
  if (!f) {
    bl_fail (err, BL_ENOMEM, "fit", "out of memory");
    return NULL;
  }
  f->d = d;
  f->y = bl_design_y (d);
  f->a = bl_design_prior_w (d);
  if (y) {
    if (!(f->y_own = bl_mallocn (bl_design_n (d), sizeof (double))))
      goto nomem;
    memcpy (f->y_own, y, bl_design_n (d) * sizeof (double));
    f->y = f->y_own;
  }
  if (a) {
    if (!(f->a_own = bl_mallocn (bl_design_n (d), sizeof (double))))
      goto nomem;
    memcpy (f->a_own, a, bl_design_n (d) * sizeof (double));
    f->a = f->a_own;
  }
  f->tr.kind = BL_TRANSFORM_NONE;
  f->tr.name = NULL;
  f->tr.lambda = f->tr.lambda_lo = f->tr.lambda_hi = f->tr.lambda_practical = NAN;
  f->tr.lambda_lo_why = f->tr.lambda_hi_why = f->tr.profile_why = "";
  f->tr.digits_kept = 17;
  f->var.kind = BL_VARIANCE_NONE;
  f->var.power = f->var.power_se = NAN;
  f->st.loglik_transformed = NAN;
  f->st.fam_par = f->st.fam_par_se = f->st.fam_par_lo = f->st.fam_par_hi = NAN;
  f->st.fam_par_why = "";
  f->fam = fam;
  f->link = lnk;
  f->method = opt->method;
  f->fam_par = opt->fam_par;
  f->n = bl_design_n (d);
  f->p = bl_design_p (d);
  f->st.n = f->n;
  f->st.p = f->p;
  f->st.level = opt->level;
  f->st.deviance_null_why = f->st.loglik_why = f->st.aicc_why = f->st.phi_ml_why = "";
  f->st.se_kind = "model";
  if (!alloc_tables (f)) {
    /* the p x p tables dominate when p is large (a categorical term of many levels) */
    const double gb = (2.0 * (double) f->p * (double) f->p + 4.0 * (double) f->n)
                      * sizeof (double) / 1e9;
    const size_t n = f->n, p = f->p;
    bl_fit_free (f);
    bl_fail (err, BL_ENOMEM, "fit", "out of memory for a fit of %zu rows and %zu columns "
             "(its coefficient tables need about %.3g GB)", n, p, gb);
    return NULL;
  }

  return f;
nomem:
  bl_fit_free (f);
  bl_fail (err, BL_ENOMEM, "fit", "out of memory");
  return NULL;
}

/* Wald table from f->cov: z = beta / se; p two-sided; interval beta -/+ q se with q the
   normal or t quantile at (1 + level) / 2.  The t reference has dof_resid degrees of freedom,
   or G - 1 with cluster standard errors (G clusters), whatever the family: the sum of G
   cluster scores carries at most G - 1 free directions, and t on G - 1 with the CR1 factor
   is the usual small-sample practice (Bell & McCaffrey 2002, Survey Methodology 28,
   169-181; Cameron & Miller 2015, J. Human Resources 50, 317-372, section VI.B; from
   memory). */
void
bl_fit_wald_table (bl_fit *f)
{
  bl_fit_stats *st = &f->st;
  const size_t p = f->p;
  double q = NAN;
  if (st->se_kind && !strcmp (st->se_kind, "cluster") && st->clusters >= 2) {
    st->wald_is_t = 1;
    st->dof_wald = st->clusters - 1;
  } else {
    st->dof_wald = st->wald_is_t ? st->dof_resid : 0;
  }
  if (st->wald_is_t) {
    if (st->dof_wald > 0)
      q = gsl_cdf_tdist_Qinv ((1.0 - st->level) / 2.0, (double) st->dof_wald);
  } else {
    q = gsl_cdf_ugaussian_Qinv ((1.0 - st->level) / 2.0);
  }
  for (size_t j = 0; j < p; j++) {
    f->log10p[j] = NAN;
    if (f->aliased[j]) {
      f->beta[j] = f->se[j] = f->wald[j] = f->pval[j] = f->lo[j] = f->hi[j] = NAN;
      continue;
    }
    f->se[j] = sqrt (f->cov[j + j * p]);
    f->wald[j] = (f->se[j] > 0.0) ? f->beta[j] / f->se[j] : NAN;
    /* the two-sided p from the upper tail in log space (family_tails.c): its double is
       right through the subnormals instead of 0 from |z| = 37.5 on */
    if (isfinite (f->wald[j])) {
      const double lp = bl_tail_t_logp2 (f->wald[j], st->wald_is_t ? (double) st->dof_wald
                                                                   : HUGE_VAL);
      f->pval[j] = exp (lp);
      f->log10p[j] = lp / log (10.0);
    } else
      f->pval[j] = NAN;
    f->lo[j] = f->beta[j] - q * f->se[j];
    f->hi[j] = f->beta[j] + q * f->se[j];
  }
}

void
bl_fit_set_loglik (bl_fit *f, double loglik, size_t k)
{
  bl_fit_stats *st = &f->st;
  const size_t n = f->n;
  st->k = k;
  st->loglik = loglik;
  if (!isfinite (loglik)) {
    st->aic = st->aicc = st->bic = NAN;
    return;
  }
  st->aic = -2.0 * loglik + 2.0 * (double) k;
  st->bic = -2.0 * loglik + (double) k * log ((double) n);
  if (n > k + 1) {
    st->aicc = st->aic + 2.0 * (double) k * (double) (k + 1) / (double) (n - k - 1);
    st->aicc_why = "";
  } else {
    st->aicc = NAN;
    st->aicc_why = "n - k - 1 <= 0: the small-sample correction does not exist";
  }
}

const bl_err *bl_fit_status (const bl_fit *f) { return &f->status; }
const bl_fit_stats *bl_fit_stats_get (const bl_fit *f) { return &f->st; }
const bl_warnings *bl_fit_warnings (const bl_fit *f) { return &f->warn; }
const bl_design *bl_fit_design (const bl_fit *f) { return f->d; }
const bl_family *bl_fit_family (const bl_fit *f) { return f->fam; }
const bl_link *bl_fit_link (const bl_fit *f) { return f->link; }
bl_method bl_fit_method (const bl_fit *f) { return f->method; }
const double *bl_fit_beta (const bl_fit *f) { return f->beta; }
const double *bl_fit_se (const bl_fit *f) { return f->se; }
const double *bl_fit_wald (const bl_fit *f) { return f->wald; }
const double *bl_fit_pvalue (const bl_fit *f) { return f->pval; }
const double *bl_fit_log10p (const bl_fit *f) { return f->log10p; }
const double *bl_fit_lo (const bl_fit *f) { return f->lo; }
const double *bl_fit_hi (const bl_fit *f) { return f->hi; }
const int *bl_fit_aliased (const bl_fit *f) { return f->aliased; }
const double *bl_fit_cov (const bl_fit *f) { return f->cov; }
const double *bl_fit_mu (const bl_fit *f) { return f->mu; }
const double *bl_fit_eta (const bl_fit *f) { return f->eta; }
const double *bl_fit_y (const bl_fit *f) { return f->y; }
double bl_fit_family_par (const bl_fit *f) { return f->fam_par; }
const double *bl_fit_prior_w (const bl_fit *f) { return f->a; }
const double *bl_fit_working_w (const bl_fit *f) { return f->w; }
const bl_fit_transform_info *bl_fit_transform (const bl_fit *f) { return &f->tr; }
const bl_fit_variance_info *bl_fit_variance (const bl_fit *f) { return &f->var; }
