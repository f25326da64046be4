/* report_json.c -- the fit as one JSON document (doc/json.md lists every key). */
#include <math.h>
#include <string.h>
#include "jsonw.h"
#include "report.h"

static void
why (bl_jsonw *w, const char *key, double val, const char *reason)
{
  if (!isfinite (val) && reason && reason[0])
    jw_str (w, key, reason);
}

/* The "data" object of every document: where the rows came from and which were set aside. */
void
bl_report_data_json (bl_jsonw *w, const bl_design *d, const char *source)
{
  size_t dropped = 0;
  jw_obj (w, "data");
  jw_str (w, "source", source);
  jw_size (w, "rows_read", bl_design_rows_read (d));
  jw_size (w, "rows_used", bl_design_n (d));
  for (size_t i = 0; i < bl_design_ndrop (d); i++) {
    size_t c;
    bl_design_drop_reason (d, i, &c);
    dropped += c;
  }
  jw_size (w, "rows_dropped", dropped);
  jw_obj (w, "drop_reasons");
  for (size_t i = 0; i < bl_design_ndrop (d); i++) {
    size_t c;
    const char *r = bl_design_drop_reason (d, i, &c);
    jw_size (w, r, c);
  }
  jw_obj_end (w);
  jw_obj_end (w);
}

void
bl_report_head_json (bl_jsonw *w, FILE *out, const char *version, const bl_design *d,
                     const char *source)
{
  jw_init (w, out);
  jw_obj (w, NULL);
  jw_obj (w, "tool");
  jw_str (w, "name", "ballast");
  jw_str (w, "version", version);
  jw_obj_end (w);
  if (d)
    bl_report_data_json (w, d, source);
}

/* The "model" object: method, family, link, terms, and the variance or transform. */
static void
model_json (bl_jsonw *w, const bl_fit *fit, const bl_report_info *info)
{
  const bl_design *d = bl_fit_design (fit);
  const size_t p = bl_design_p (d);

  jw_obj (w, "model");
  jw_str (w, "method", bl_method_name (bl_fit_method (fit)));
  jw_str (w, "family", bl_family_name (bl_fit_family (fit)));
  jw_str (w, "link", bl_fit_link (fit)->name);
  jw_str (w, "response", bl_design_response (d));
  jw_arr (w, "terms");
  if (info->terms)
    for (size_t i = 0; i < bl_terms_count (info->terms); i++)
      jw_str (w, NULL, bl_terms_get (info->terms, i)->label);
  jw_arr_end (w);
  jw_bool (w, "intercept", bl_design_has_intercept (d));
  jw_arr (w, "columns");
  for (size_t j = 0; j < p; j++)
    jw_str (w, NULL, bl_design_label (d, j));
  jw_arr_end (w);
  jw_str (w, "offset", info->offset ? bl_terms_get (info->offset, 0)->label : NULL);
  jw_str (w, "weights", info->weights);
  {
    const bl_fit_variance_info *v = bl_fit_variance (fit);
    if (bl_fit_method (fit) == BL_METHOD_WLS && v->kind != BL_VARIANCE_NONE) {
      jw_obj (w, "variance");
      jw_str (w, "expr", v->expr);
      jw_num (w, "power", v->power);
      jw_num (w, "power_se", v->power_se);
      jw_bool (w, "power_estimated", v->power_estimated);
      jw_str (w, "kind", v->kind == BL_VARIANCE_FITTED ? "fitted" : "column");
      jw_obj_end (w);
    } else if (bl_fit_method (fit) == BL_METHOD_WLS) {
      jw_null (w, "variance");
    }
  }
  {
    const bl_fit_transform_info *t = bl_fit_transform (fit);
    if (t->kind != BL_TRANSFORM_NONE) {
      jw_obj (w, "transform");
      jw_str (w, "name", t->name);
      jw_num (w, "lambda", t->lambda);
      jw_num (w, "lambda_lo", t->lambda_lo);
      jw_num (w, "lambda_hi", t->lambda_hi);
      jw_num (w, "lambda_practical", t->lambda_practical);
      jw_bool (w, "lambda_estimated", t->lambda_estimated);
      if (t->shift_given)
        jw_num (w, "shift", t->shift);
      else
        jw_null (w, "shift");
      jw_arr (w, "profile");
      for (size_t i = 0; i < t->nprofile; i++) {
        jw_obj (w, NULL);
        jw_num (w, "lambda", t->profile_lambda[i]);
        jw_num (w, "loglik", t->profile_loglik[i]);
        jw_obj_end (w);
      }
      jw_arr_end (w);
      jw_obj_end (w);
    } else if (bl_fit_method (fit) == BL_METHOD_OLS) {
      jw_null (w, "transform");
    }
  }
  jw_obj_end (w);
}

/* The "coef" array, one object per design column. */
static void
coef_json (bl_jsonw *w, const bl_fit *fit)
{
  const bl_design *d = bl_fit_design (fit);
  const size_t p = bl_design_p (d);

  jw_arr (w, "coef");
  for (size_t j = 0; j < p; j++) {
    jw_obj (w, NULL);
    jw_str (w, "label", bl_design_label (d, j));
    jw_num (w, "beta", bl_fit_beta (fit)[j]);
    jw_num (w, "se", bl_fit_se (fit)[j]);
    jw_num (w, "wald", bl_fit_wald (fit)[j]);
    jw_num (w, "p", bl_fit_pvalue (fit)[j]);
    jw_num (w, "lo", bl_fit_lo (fit)[j]);
    jw_num (w, "hi", bl_fit_hi (fit)[j]);
    jw_bool (w, "aliased", bl_fit_aliased (fit)[j]);
    jw_obj_end (w);
  }
  jw_arr_end (w);
}

/* The "fit" object: the figures, the family parameter and the reasons for the missing
   ones. */
static void
fit_json (bl_jsonw *w, const bl_fit *fit)
{
  const bl_fit_stats *st = bl_fit_stats_get (fit);

  jw_obj (w, "fit");
  jw_size (w, "n", st->n);
  jw_size (w, "rank", st->rank);
  jw_size (w, "dof_resid", st->dof_resid);
  jw_size (w, "dof_null", st->dof_null);
  jw_num (w, "deviance", st->deviance);
  jw_num (w, "deviance_null", st->deviance_null);
  jw_num (w, "pearson", st->pearson);
  jw_num (w, "phi_pearson", st->phi_pearson);
  jw_num (w, "phi_ml", st->phi_ml);
  jw_num (w, "loglik", st->loglik);
  if (bl_fit_transform (fit)->kind != BL_TRANSFORM_NONE)
    jw_num (w, "loglik_transformed", st->loglik_transformed);
  jw_num (w, "aic", st->aic);
  jw_num (w, "aicc", st->aicc);
  jw_num (w, "bic", st->bic);
  jw_size (w, "k", st->k);
  if (bl_family_par_kind (bl_fit_family (fit)) == BL_FAMPAR_THETA) {
    jw_num (w, "theta", st->fam_par);
    jw_num (w, "theta_se", st->fam_par_se);
    jw_bool (w, "theta_estimated", st->fam_par_est);
  } else if (bl_family_par_kind (bl_fit_family (fit)) == BL_FAMPAR_POWER) {
    jw_num (w, "power", st->fam_par);
    jw_num (w, "power_lo", st->fam_par_lo);
    jw_num (w, "power_hi", st->fam_par_hi);
    jw_bool (w, "power_estimated", st->fam_par_est);
  }
  jw_obj (w, "null_reasons");
  why (w, "deviance", st->deviance, st->loglik_why);
  why (w, "deviance_null", st->deviance_null, st->deviance_null_why);
  why (w, "phi_pearson", st->phi_pearson,
       st->converged ? "no residual degrees of freedom" : st->loglik_why);
  why (w, "phi_ml", st->phi_ml, st->phi_ml_why);
  why (w, "loglik", st->loglik, st->loglik_why);
  why (w, "aic", st->aic, st->loglik_why);
  why (w, "aicc", st->aicc, st->aicc_why);
  why (w, "bic", st->bic, st->loglik_why);
  if (bl_family_par_kind (bl_fit_family (fit)) == BL_FAMPAR_THETA)
    why (w, "theta", st->fam_par, st->fam_par_why);
  jw_obj_end (w);
  jw_obj_end (w);
  jw_obj_end (w);
}

int
bl_report_fit_json (FILE *out, const bl_fit *fit, const bl_report_info *info, bl_err *err)
{
  const bl_design *d = bl_fit_design (fit);
  const bl_fit_stats *st = bl_fit_stats_get (fit);
  const bl_warnings *wn = bl_fit_warnings (fit);
  const bl_err *status = bl_fit_status (fit);
  bl_jsonw w;

  bl_report_head_json (&w, out, info->tool_version, d, info->source);

  model_json (&w, fit, info);

  jw_obj (&w, "status");
  jw_bool (&w, "converged", st->converged);
  jw_size (&w, "iterations", st->iterations);
  jw_size (&w, "halvings", st->halvings);
  jw_arr (&w, "warnings");
  for (size_t i = 0; i < wn->n; i++)
    jw_str (&w, NULL, wn->msg[i]);
  jw_arr_end (&w);
  if (status->code != BL_OK)
    jw_str (&w, "error", status->msg);
  else
    jw_null (&w, "error");
  jw_str (&w, "solver", st->solver);
  jw_obj_end (&w);

  if (info->against) {
    const bl_nested *a = info->against;
    jw_obj (&w, "against");
    jw_str (&w, "terms", a->terms);
    jw_num (&w, "stat", a->stat);
    jw_size (&w, "dof", a->dof);
    if (a->dof2)
      jw_size (&w, "dof2", a->dof2);
    jw_num (&w, "p", a->p);
    jw_str (&w, "form", a->form);
    jw_num (&w, "deviance_small", a->deviance_small);
    jw_num (&w, "deviance_big", a->deviance_big);
    jw_obj_end (&w);
  }
  jw_num (&w, "level", st->level);
  jw_str (&w, "se_kind", st->se_kind);
  if (!strcmp (st->se_kind, "cluster"))
    jw_size (&w, "clusters", st->clusters);
  jw_str (&w, "wald_kind", st->wald_is_t ? "t" : "z");

  coef_json (&w, fit);
  fit_json (&w, fit);
  if (jw_finish (&w) || fflush (out) != 0)
    return bl_fail (err, BL_EIO, "output", "write failed");
  return BL_OK;
}
