/* model_write.c -- a fitted model saved as JSON (doc/model-format.md): bl_model_write.

   Writing uses the streaming writer (json.h, numbers %.17g, so every double reads back
   bit for bit); model_read.c reads the file back with Jansson and checks it. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "version.h"
#include "design.h"
#include "json.h"
#include "model_impl.h"

static const char *
transform_name (bl_transform k)
{
  switch (k) {
  case BL_TRANSFORM_LOG: return "log";
  case BL_TRANSFORM_SQRT: return "sqrt";
  case BL_TRANSFORM_BOXCOX: return "boxcox";
  default: return "none";
  }
}

static const char *
variance_name (bl_variance k)
{
  return k == BL_VARIANCE_COLUMN ? "column" : k == BL_VARIANCE_FITTED ? "fitted" : "none";
}

/* The smearing summaries over all N residuals e_i = y_i - mu_i of a transformed fit (the
   fit's own sums, bl_fit_transform_info, as bl_fit_backtransform uses them), and every
   stride-th residual (the subsample of bl_fit_backtransform above BL_SMEAR_MAX, here with
   BL_MODEL_RESIDUALS_MAX). */
static void
write_smearing (bl_json *w, const bl_fit *fit)
{
  const size_t n = bl_fit_stats_get (fit)->n;
  const double *y = bl_fit_y (fit), *mu = bl_fit_mu (fit);
  const size_t stride = n > BL_MODEL_RESIDUALS_MAX
                        ? (n + BL_MODEL_RESIDUALS_MAX - 1) / BL_MODEL_RESIDUALS_MAX : 1;
  const bl_fit_transform_info *tr = bl_fit_transform (fit);
  const long double se = tr->smear_sum_exp, s1 = tr->smear_sum, s2 = tr->smear_sum_sq;
  const double emin = n ? tr->smear_min : HUGE_VAL;
  bl_json_obj (w, "smearing");
  bl_json_size (w, "n", n);
  bl_json_size (w, "stride", stride);
  bl_json_num (w, "mean_exp", n ? (double) (se / (long double) n) : NAN);
  bl_json_num (w, "mean", n ? (double) (s1 / (long double) n) : NAN);
  bl_json_num (w, "mean_sq", n ? (double) (s2 / (long double) n) : NAN);
  bl_json_num (w, "min", emin);
  bl_json_arr (w, "residuals");
  for (size_t i = 0; i < n; i += stride)
    bl_json_num (w, NULL, y[i] - mu[i]);
  bl_json_arr_end (w);
  bl_json_obj_end (w);
}


/* The variance column's name into VARCOL (CAP bytes): the resolved expression "COL^K" of a
   column variance function up to its last '^'; "" for the other kinds. */
static int
variance_column (const bl_fit_variance_info *vi, char *varcol, size_t cap, bl_err *err)
{
  varcol[0] = '\0';
  if (vi->kind == BL_VARIANCE_COLUMN) {
    const char *caret = strrchr (vi->expr, '^');
    const size_t len = caret ? (size_t) (caret - vi->expr) : 0;
    if (!caret || strlen (vi->expr) + 1 >= cap)
      return bl_fail (err, BL_EINTERNAL, "model", "cannot recover the variance column from "
                      "'%s'", vi->expr);
    memcpy (varcol, vi->expr, len);
    varcol[len] = '\0';
  }
  return BL_OK;
}

/* What the new data must hold: source, response, intercept, terms, offset, weights, the
   categorical columns with their levels and references, and the column labels. */
static void
write_design (bl_json *w, const bl_design *d, const bl_terms *terms, const bl_terms *offset,
              const char *weights)
{
  bl_json_str (w, "source", bl_design_source (d));
  bl_json_str (w, "response", bl_design_response (d));
  bl_json_bool (w, "intercept", bl_design_has_intercept (d));
  bl_json_arr (w, "terms");
  for (size_t i = 0; i < bl_terms_count (terms); i++)
    bl_json_str (w, NULL, bl_terms_get (terms, i)->label);
  bl_json_arr_end (w);
  bl_json_str (w, "offset", offset ? bl_terms_get (offset, 0)->label : NULL);
  bl_json_str (w, "weights", weights);
  bl_json_arr (w, "categorical");
  for (size_t i = 0; i < bl_design_ncat (d); i++) {
    bl_json_obj (w, NULL);
    bl_json_str (w, "column", bl_design_cat_column (d, i));
    bl_json_arr (w, "levels");
    for (size_t k = 0; k < bl_design_cat_nlevels (d, i); k++)
      bl_json_str (w, NULL, bl_design_cat_level (d, i, k));
    bl_json_arr_end (w);
    bl_json_str (w, "reference", bl_design_cat_reference (d, i));
    bl_json_obj_end (w);
  }
  bl_json_arr_end (w);
  bl_json_arr (w, "columns");
  for (size_t j = 0; j < bl_design_p (d); j++)
    bl_json_str (w, NULL, bl_design_label (d, j));
  bl_json_arr_end (w);
}

/* The kind of model: method, family and link (with the family's parameter), variance
   function, transform and its smearing residuals. */
static void
write_kinds (bl_json *w, const bl_fit *fit, const char *varcol)
{
  const bl_fit_transform_info *tr = bl_fit_transform (fit);
  const bl_fit_variance_info *vi = bl_fit_variance (fit);
  const bl_family *fam = bl_fit_family (fit);
  bl_json_str (w, "method", bl_method_name (bl_fit_method (fit)));
  bl_json_str (w, "family", bl_family_name (fam));
  bl_json_str (w, "link", bl_fit_link (fit)->name);
  if (bl_family_par_name (fam))
    bl_json_num (w, "family_par", bl_fit_family_par (fit));
  else
    bl_json_null (w, "family_par");
  bl_json_obj (w, "variance");
  bl_json_str (w, "kind", variance_name (vi->kind));
  bl_json_str (w, "column", vi->kind == BL_VARIANCE_COLUMN ? varcol : NULL);
  if (vi->kind == BL_VARIANCE_NONE)
    bl_json_null (w, "power");
  else
    bl_json_num (w, "power", vi->power);
  bl_json_str (w, "expr", vi->expr);
  bl_json_obj_end (w);
  bl_json_obj (w, "transform");
  bl_json_str (w, "kind", transform_name (tr->kind));
  if (tr->kind == BL_TRANSFORM_BOXCOX)
    bl_json_num (w, "lambda", tr->lambda);
  else
    bl_json_null (w, "lambda");
  bl_json_num (w, "shift", tr->kind == BL_TRANSFORM_NONE ? 0.0 : tr->shift);
  bl_json_obj_end (w);
  if (tr->kind != BL_TRANSFORM_NONE)
    write_smearing (w, fit);
  else
    bl_json_null (w, "smearing");
}

/* The estimates: coefficients (null when aliased), covariance, dispersions, counts, level. */
static void
write_estimates (bl_json *w, const bl_fit *fit)
{
  const bl_fit_stats *st = bl_fit_stats_get (fit);
  const double *beta = bl_fit_beta (fit), *cov = bl_fit_cov (fit);
  const int *aliased = bl_fit_aliased (fit);
  const size_t p = bl_design_p (bl_fit_design (fit));
  bl_json_arr (w, "coef");
  for (size_t j = 0; j < p; j++)
    if (aliased[j])
      bl_json_null (w, NULL);
    else
      bl_json_num (w, NULL, beta[j]);
  bl_json_arr_end (w);
  bl_json_arr (w, "cov");
  for (size_t j = 0; j < p; j++) {
    bl_json_arr (w, NULL);
    for (size_t k = 0; k < p; k++)
      if (aliased[j] || aliased[k])
        bl_json_null (w, NULL);
      else
        bl_json_num (w, NULL, cov[j + k * p]);
    bl_json_arr_end (w);
  }
  bl_json_arr_end (w);
  bl_json_str (w, "se_kind", st->se_kind);
  bl_json_num (w, "dispersion", st->phi_used);
  bl_json_num (w, "phi_pearson", st->phi_pearson);
  bl_json_num (w, "phi_ml", st->phi_ml);
  bl_json_size (w, "n", st->n);
  bl_json_size (w, "rank", st->rank);
  bl_json_size (w, "dof_resid", st->dof_resid);
  bl_json_size (w, "dof_wald", st->dof_wald);
  bl_json_bool (w, "wald_is_t", st->wald_is_t);
  bl_json_num (w, "level", st->level);
}

/* The file's "null_reasons": why each null value is null (doc/model-format.md). */
static void
write_reasons (bl_json *w, const bl_fit *fit, const bl_terms *offset, const char *weights)
{
  const bl_fit_stats *st = bl_fit_stats_get (fit);
  const bl_fit_transform_info *tr = bl_fit_transform (fit);
  const bl_fit_variance_info *vi = bl_fit_variance (fit);
  const int *aliased = bl_fit_aliased (fit);
  const size_t p = bl_design_p (bl_fit_design (fit));
  const char *nophi = st->dof_resid == 0 ? "no residual degrees of freedom"
                      : "the dispersion is fixed by the family";
  int any_aliased = 0;
  for (size_t j = 0; j < p; j++)
    any_aliased |= aliased[j];
  bl_json_obj (w, "null_reasons");
  if (!offset)
    bl_json_str (w, "offset", "no offset");
  if (!weights)
    bl_json_str (w, "weights", "no prior weights");
  if (!bl_family_par_name (bl_fit_family (fit)))
    bl_json_str (w, "family_par", "the family has no shape parameter");
  if (vi->kind != BL_VARIANCE_COLUMN)
    bl_json_str (w, "variance.column", "the variance function is not a column's power");
  if (vi->kind == BL_VARIANCE_NONE)
    bl_json_str (w, "variance.power", "no variance function");
  if (tr->kind != BL_TRANSFORM_BOXCOX)
    bl_json_str (w, "transform.lambda", "not a Box-Cox transform");
  if (tr->kind == BL_TRANSFORM_NONE)
    bl_json_str (w, "smearing", "no transform: nothing to smear");
  if (any_aliased) {
    bl_json_str (w, "coef", "aliased column: a linear combination of earlier columns");
    bl_json_str (w, "cov", "aliased column: a linear combination of earlier columns");
  } else if (st->dof_resid == 0) {
    bl_json_str (w, "cov", "no residual degrees of freedom");
  }
  if (!isfinite (st->phi_used))
    bl_json_str (w, "dispersion", nophi);
  if (!isfinite (st->phi_pearson))
    bl_json_str (w, "phi_pearson", "no residual degrees of freedom");
  if (!isfinite (st->phi_ml))
    bl_json_str (w, "phi_ml", nophi);
  bl_json_obj_end (w);
}

int
bl_model_write (FILE *out, const bl_fit *fit, const bl_terms *terms, const bl_terms *offset,
                const char *weights, bl_err *err)
{
  const bl_fit_variance_info *vi = bl_fit_variance (fit);
  char varcol[sizeof vi->expr];
  bl_json w;
  int status;

  if (!bl_fit_stats_get (fit)->converged)
    return bl_fail (err, BL_EDATA, "model", "the fit did not converge; there is no model to "
                    "save");
  if ((status = variance_column (vi, varcol, sizeof varcol, err)) != BL_OK)
    return status;
  bl_json_init (&w, out);
  bl_json_obj (&w, NULL);
  bl_json_str (&w, "format", BL_MODEL_FORMAT_NAME);
  bl_json_size (&w, "format_version", BL_MODEL_FORMAT);
  bl_json_str (&w, "ballast_version", bl_version ());
  write_design (&w, bl_fit_design (fit), terms, offset, weights);
  write_kinds (&w, fit, varcol);
  write_estimates (&w, fit);
  write_reasons (&w, fit, offset, weights);
  bl_json_obj_end (&w);
  if (bl_json_finish (&w) || fflush (out) != 0)
    return bl_fail (err, BL_EIO, "model", "write failed: %s", strerror (errno));
  return BL_OK;
}
