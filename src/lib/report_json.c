/* report_json.c -- the fit as one JSON document (doc/json.md lists every key). */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "report_impl.h"
#include "report.h"

static void
why (bl_json *w, const char *key, double val, const char *reason)
{
  if (!isfinite (val) && reason && reason[0])
    bl_json_str (w, key, reason);
}

/* The "data" object of every document: where the rows came from and which were set aside. */
void
bl_report_data_json (bl_json *w, const bl_design *d, const char *source)
{
  size_t dropped = 0;
  bl_json_obj (w, "data");
  bl_json_str (w, "source", source);
  bl_json_size (w, "rows_read", bl_design_rows_read (d));
  bl_json_size (w, "rows_used", bl_design_n (d));
  for (size_t i = 0; i < bl_design_ndrop (d); i++) {
    size_t c;
    bl_design_drop_reason (d, i, &c);
    dropped += c;
  }
  bl_json_size (w, "rows_dropped", dropped);
  bl_json_obj (w, "drop_reasons");
  for (size_t i = 0; i < bl_design_ndrop (d); i++) {
    size_t c;
    const char *r = bl_design_drop_reason (d, i, &c);
    bl_json_size (w, r, c);
  }
  bl_json_obj_end (w);
  bl_json_obj_end (w);
}

void
bl_report_head_json (bl_json *w, FILE *out, const char *version, const bl_design *d,
                     const char *source)
{
  bl_json_init (w, out);
  bl_json_obj (w, NULL);
  bl_json_obj (w, "tool");
  bl_json_str (w, "name", "ballast");
  bl_json_str (w, "version", version);
  bl_json_obj_end (w);
  if (d)
    bl_report_data_json (w, d, source);
}

/* The "model" object: method, family, link, terms, and the variance or transform. */
static void
model_json (bl_json *w, const bl_fit *fit, const bl_report_info *info)
{
  const bl_design *d = bl_fit_design (fit);
  const size_t p = bl_design_p (d);

  bl_json_obj (w, "model");
  bl_json_str (w, "method", bl_method_name (bl_fit_method (fit)));
  bl_json_str (w, "family", bl_family_name (bl_fit_family (fit)));
  bl_json_str (w, "link", bl_fit_link (fit)->name);
  bl_json_str (w, "response", bl_design_response (d));
  bl_json_arr (w, "terms");
  if (info->terms)
    for (size_t i = 0; i < bl_terms_count (info->terms); i++)
      bl_json_str (w, NULL, bl_terms_get (info->terms, i)->label);
  bl_json_arr_end (w);
  bl_json_bool (w, "intercept", bl_design_has_intercept (d));
  bl_json_arr (w, "columns");
  for (size_t j = 0; j < p; j++)
    bl_json_str (w, NULL, bl_design_label (d, j));
  bl_json_arr_end (w);
  bl_json_str (w, "offset", info->offset ? bl_terms_get (info->offset, 0)->label : NULL);
  bl_json_str (w, "weights", info->weights);
  {
    const bl_fit_variance_info *v = bl_fit_variance (fit);
    if (bl_fit_method (fit) == BL_METHOD_WLS && v->kind != BL_VARIANCE_NONE) {
      bl_json_obj (w, "variance");
      bl_json_str (w, "expr", v->expr);
      bl_json_num (w, "power", v->power);
      bl_json_num (w, "power_se", v->power_se);
      bl_json_bool (w, "power_estimated", v->power_estimated);
      bl_json_str (w, "kind", v->kind == BL_VARIANCE_FITTED ? "fitted" : "column");
      bl_json_obj_end (w);
    } else if (bl_fit_method (fit) == BL_METHOD_WLS) {
      bl_json_null (w, "variance");
    }
  }
  {
    const bl_fit_transform_info *t = bl_fit_transform (fit);
    if (t->kind != BL_TRANSFORM_NONE) {
      bl_json_obj (w, "transform");
      bl_json_str (w, "name", t->name);
      bl_json_num (w, "lambda", t->lambda);
      bl_json_num (w, "lambda_lo", t->lambda_lo);
      bl_json_num (w, "lambda_hi", t->lambda_hi);
      bl_json_num (w, "lambda_practical", t->lambda_practical);
      bl_json_bool (w, "lambda_estimated", t->lambda_estimated);
      if (t->lambda_estimated)
        bl_json_str (w, "lambda_edge", t->lambda_edge < 0 ? "lower" : t->lambda_edge > 0
                     ? "upper" : NULL);
      else
        bl_json_null (w, "lambda_edge");
      if (t->shift_given)
        bl_json_num (w, "shift", t->shift);
      else
        bl_json_null (w, "shift");
      bl_json_arr (w, "profile");
      for (size_t i = 0; i < t->nprofile; i++) {
        bl_json_obj (w, NULL);
        bl_json_num (w, "lambda", t->profile_lambda[i]);
        bl_json_num (w, "loglik", t->profile_loglik[i]);
        bl_json_obj_end (w);
      }
      bl_json_arr_end (w);
      {
        int null_point = 0;
        for (size_t i = 0; i < t->nprofile; i++)
          null_point |= !isfinite (t->profile_loglik[i]);
        bl_json_obj (w, "null_reasons");
        why (w, "lambda", t->lambda, "no Box-Cox power: the log or square-root transform");
        why (w, "lambda_lo", t->lambda_lo, t->kind != BL_TRANSFORM_BOXCOX ? "no Box-Cox power"
             : t->lambda_lo_why);
        why (w, "lambda_hi", t->lambda_hi, t->kind != BL_TRANSFORM_BOXCOX ? "no Box-Cox power"
             : t->lambda_hi_why);
        why (w, "lambda_practical", t->lambda_practical, t->kind != BL_TRANSFORM_BOXCOX
             ? "no Box-Cox power" : !t->lambda_estimated ? "lambda was fixed"
             : "no multiple of 0.5 inside the interval");
        why (w, "lambda_edge", NAN, !t->lambda_estimated ? "lambda was not searched for"
             : t->lambda_edge == 0 ? "the maximum is inside the search range" : "");
        if (null_point)
          why (w, "profile.loglik", NAN, t->profile_why);
        bl_json_obj_end (w);
      }
      bl_json_obj_end (w);
    } else if (bl_fit_method (fit) == BL_METHOD_OLS) {
      bl_json_null (w, "transform");
    }
  }
  bl_json_obj_end (w);
}

/* The "coef" array, one object per design column. */
static void
coef_json (bl_json *w, const bl_fit *fit)
{
  const bl_design *d = bl_fit_design (fit);
  const size_t p = bl_design_p (d);

  bl_json_arr (w, "coef");
  for (size_t j = 0; j < p; j++) {
    bl_json_obj (w, NULL);
    bl_json_str (w, "label", bl_design_label (d, j));
    bl_json_num (w, "beta", bl_fit_beta (fit)[j]);
    bl_json_num (w, "se", bl_fit_se (fit)[j]);
    bl_json_num (w, "wald", bl_fit_wald (fit)[j]);
    bl_json_num (w, "p", bl_fit_pvalue (fit)[j]);
    bl_json_num (w, "log10_p", isfinite (bl_fit_pvalue (fit)[j]) ? bl_fit_log10p (fit)[j] : NAN);
    bl_json_num (w, "lo", bl_fit_lo (fit)[j]);
    bl_json_num (w, "hi", bl_fit_hi (fit)[j]);
    if (bl_fit_stats_get (fit)->dof_wald > 0)
      bl_json_size (w, "ref_dof", bl_fit_stats_get (fit)->dof_wald);
    else
      bl_json_null (w, "ref_dof");
    bl_json_bool (w, "aliased", bl_fit_aliased (fit)[j]);
    bl_json_obj_end (w);
  }
  bl_json_arr_end (w);
}

/* Reasons for the nulls of the "model" and "status" objects, under their paths from the
   document (doc/json.md, "Null values"): an option not given, a parameter fixed, an open
   interval. */
static void
model_reasons_json (bl_json *w, const bl_fit *fit, const bl_report_info *info)
{
  const bl_fit_transform_info *t = bl_fit_transform (fit);
  const bl_fit_variance_info *v = bl_fit_variance (fit);
  const int wls = bl_fit_method (fit) == BL_METHOD_WLS;
  if (!info->offset)
    bl_json_str (w, "model.offset", "no --offset");
  if (!info->weights)
    bl_json_str (w, "model.weights", "no --weights");
  if (wls && v->kind == BL_VARIANCE_NONE)
    bl_json_str (w, "model.variance", "prior weights only: no variance function");
  if (wls && v->kind != BL_VARIANCE_NONE)
    why (w, "model.variance.power_se", v->power_se, v->power_estimated
         ? "the observed information for K is not positive" : "K was fixed: no standard error");
  if (t->kind == BL_TRANSFORM_NONE && bl_fit_method (fit) == BL_METHOD_OLS)
    bl_json_str (w, "model.transform", "no --transform: y itself");
  if (t->kind != BL_TRANSFORM_NONE) {
    const int bc = t->kind == BL_TRANSFORM_BOXCOX;
    const char *fixed = !bc ? "not a Box-Cox transform"
                        : !t->lambda_estimated ? "lambda was fixed: no interval" : NULL;
    why (w, "model.transform.lambda", t->lambda, bc ? "no estimate" : "not a Box-Cox transform");
    why (w, "model.transform.lambda_lo", t->lambda_lo, fixed ? fixed
         : "open: the profile does not fall 1.92 below its top inside [-3, 3]");
    why (w, "model.transform.lambda_hi", t->lambda_hi, fixed ? fixed
         : "open: the profile does not fall 1.92 below its top inside [-3, 3]");
    why (w, "model.transform.lambda_practical", t->lambda_practical, fixed ? fixed
         : "no multiple of 0.5 lies inside the interval");
    if (!t->shift_given)
      bl_json_str (w, "model.transform.shift", "no --shift");
  }
  if (bl_fit_status (fit)->code == BL_OK)
    bl_json_str (w, "status.error", "the fit did not fail");
}

/* The document's own "null_reasons": why a coefficient's figures are null, under
   "coef.KEY", and the model's and status's nulls (the fit-level figures have theirs in
   fit.null_reasons, the nested test's in against.null_reasons). */
static void
coef_reasons_json (bl_json *w, const bl_fit *fit, const bl_report_info *info)
{
  const bl_fit_stats *st = bl_fit_stats_get (fit);
  const size_t p = bl_design_p (bl_fit_design (fit));
  static const char *const keys[] = {"beta", "se", "wald", "p", "log10_p", "lo", "hi"};
  const char *aliased = NULL, *noest = NULL, *nose = NULL;
  char key[32];
  for (size_t j = 0; j < p; j++) {
    if (bl_fit_aliased (fit)[j])
      aliased = "aliased column: a linear combination of earlier columns, left out";
    else if (!isfinite (bl_fit_beta (fit)[j]))
      noest = st->converged ? "no estimate" : bl_fit_status (fit)->msg;
    else if (!(bl_fit_se (fit)[j] > 0.0))
      nose = st->wald_is_t && st->dof_wald == 0
             ? "no residual degrees of freedom: the standard error, t-ratio and interval do "
               "not exist"
             : "zero or undefined standard error: no ratio, p-value or interval";
  }
  bl_json_obj (w, "null_reasons");
  for (size_t k = 0; k < sizeof keys / sizeof keys[0]; k++) {
    const char *r = aliased ? aliased : noest ? noest : NULL;
    if (!r && k > 0 && nose)
      r = nose;
    snprintf (key, sizeof key, "coef.%s", keys[k]);
    if (r)
      bl_json_str (w, key, r);
  }
  if (st->dof_wald == 0)
    bl_json_str (w, "ref_dof", st->wald_is_t ? "no residual degrees of freedom"
                 : "the reference distribution is the normal (the dispersion is fixed): "
                   "no degrees of freedom");
  if (st->dof_wald == 0)
    bl_json_str (w, "coef.ref_dof", st->wald_is_t ? "no residual degrees of freedom"
                 : "the reference distribution is the normal (the dispersion is fixed): "
                   "no degrees of freedom");
  model_reasons_json (w, fit, info);
  bl_json_obj_end (w);
}

/* The "fit" object: the figures, the family parameter and the reasons for the missing
   ones. */
static void
fit_json (bl_json *w, const bl_fit *fit)
{
  const bl_fit_stats *st = bl_fit_stats_get (fit);

  bl_json_obj (w, "fit");
  bl_json_size (w, "n", st->n);
  bl_json_size (w, "rank", st->rank);
  bl_json_size (w, "dof_resid", st->dof_resid);
  bl_json_size (w, "dof_null", st->dof_null);
  bl_json_num (w, "deviance", st->deviance);
  bl_json_num (w, "deviance_null", st->deviance_null);
  bl_json_num (w, "pearson", st->pearson);
  bl_json_num (w, "phi_pearson", st->phi_pearson);
  bl_json_num (w, "phi_ml", st->phi_ml);
  bl_json_num (w, "loglik", st->loglik);
  if (bl_fit_transform (fit)->kind != BL_TRANSFORM_NONE)
    bl_json_num (w, "loglik_transformed", st->loglik_transformed);
  bl_json_num (w, "aic", st->aic);
  bl_json_num (w, "aicc", st->aicc);
  bl_json_num (w, "bic", st->bic);
  bl_json_size (w, "k", st->k);
  if (bl_family_par_kind (bl_fit_family (fit)) == BL_FAMPAR_THETA) {
    bl_json_num (w, "theta", st->fam_par);
    bl_json_num (w, "theta_se", st->fam_par_se);
    bl_json_bool (w, "theta_estimated", st->fam_par_est);
  } else if (bl_family_par_kind (bl_fit_family (fit)) == BL_FAMPAR_POWER) {
    bl_json_num (w, "power", st->fam_par);
    bl_json_num (w, "power_lo", st->fam_par_lo);
    bl_json_num (w, "power_hi", st->fam_par_hi);
    bl_json_bool (w, "power_estimated", st->fam_par_est);
  }
  bl_json_obj (w, "null_reasons");
  why (w, "deviance", st->deviance, st->loglik_why);
  why (w, "deviance_null", st->deviance_null, st->deviance_null_why);
  why (w, "phi_pearson", st->phi_pearson,
       st->converged ? "no residual degrees of freedom" : st->loglik_why);
  why (w, "phi_ml", st->phi_ml, st->phi_ml_why);
  why (w, "loglik", st->loglik, st->loglik_why);
  why (w, "aic", st->aic, st->loglik_why);
  why (w, "aicc", st->aicc, st->aicc_why);
  why (w, "bic", st->bic, st->loglik_why);
  if (bl_family_par_kind (bl_fit_family (fit)) == BL_FAMPAR_THETA) {
    why (w, "theta", st->fam_par, st->fam_par_why);
    why (w, "theta_se", st->fam_par_se, !st->fam_par_est ? "theta was fixed: no standard error"
         : isfinite (st->fam_par) ? "the observed information for theta is not positive"
         : st->fam_par_why);
  } else if (bl_family_par_kind (bl_fit_family (fit)) == BL_FAMPAR_POWER) {
    const char *open = !st->fam_par_est ? "the power was fixed: no interval"
                       : "the profile does not fall 1.92 below its top inside the search "
                         "range of the power";
    why (w, "power", st->fam_par, st->fam_par_why ? st->fam_par_why : st->loglik_why);
    why (w, "power_lo", st->fam_par_lo, open);
    why (w, "power_hi", st->fam_par_hi, open);
  }
  if (!isfinite (st->deviance_null) && !(st->deviance_null_why && st->deviance_null_why[0]))
    why (w, "deviance_null", st->deviance_null, "the null model could not be fitted");
  if (!st->converged) {
    why (w, "pearson", st->pearson, bl_fit_status (fit)->msg);
  }
  bl_json_obj_end (w);
  bl_json_obj_end (w);
  bl_json_obj_end (w);
}

/* The nested test (--against) as an "against" object, in fit's and diagnose's documents;
   ST is the bigger model's figures (the reasons of its nulls). */
void
bl_report_against_json (bl_json *w, const bl_nested *a, const bl_fit_stats *st)
{
  bl_json_obj (w, "against");
  bl_json_str (w, "terms", a->terms);
  bl_json_num (w, "stat", a->stat);
  bl_json_size (w, "dof", a->dof);
  if (a->dof2)
    bl_json_size (w, "dof2", a->dof2);
  bl_json_num (w, "p", a->p);
  bl_json_num (w, "log10_p", a->log10_p);
  bl_json_str (w, "form", a->form);
  bl_json_str (w, "statistic", a->statistic);
  bl_json_num (w, "deviance_small", a->deviance_small);
  bl_json_num (w, "deviance_big", a->deviance_big);
  bl_json_num (w, "loglik_small", a->loglik_small);
  bl_json_num (w, "loglik_big", a->loglik_big);
  if (isfinite (a->fam_par_big) || isfinite (a->fam_par_small)) {
    bl_json_num (w, "fam_par_small", a->fam_par_small);
    bl_json_num (w, "fam_par_big", a->fam_par_big);
  }
  bl_json_obj (w, "null_reasons");
  why (w, "stat", a->stat, "a log-likelihood or deviance does not exist");
  why (w, "p", a->p, "the statistic or its degrees of freedom do not exist");
  why (w, "log10_p", a->log10_p, "the statistic or its degrees of freedom do not exist");
  why (w, "loglik_small", a->loglik_small, "the smaller model has no likelihood");
  why (w, "loglik_big", a->loglik_big, st->loglik_why);
  why (w, "deviance_small", a->deviance_small, "the smaller model has no deviance");
  why (w, "deviance_big", a->deviance_big, st->loglik_why);
  if (isfinite (a->fam_par_big) || isfinite (a->fam_par_small)) {
    why (w, "fam_par_small", a->fam_par_small, "the smaller model's parameter ran off");
    why (w, "fam_par_big", a->fam_par_big, st->fam_par_why);
  }
  bl_json_obj_end (w);
  bl_json_obj_end (w);
}

int
bl_report_fit_json (FILE *out, const bl_fit *fit, const bl_report_info *info, bl_err *err)
{
  const bl_design *d = bl_fit_design (fit);
  const bl_fit_stats *st = bl_fit_stats_get (fit);
  const bl_warnings *wn = bl_fit_warnings (fit);
  const bl_err *status = bl_fit_status (fit);
  bl_json w;

  bl_report_head_json (&w, out, info->tool_version, d, info->source);

  model_json (&w, fit, info);

  bl_json_obj (&w, "status");
  bl_json_bool (&w, "converged", st->converged);
  bl_json_size (&w, "iterations", st->iterations);
  bl_json_size (&w, "halvings", st->halvings);
  bl_json_arr (&w, "warnings");
  for (size_t i = 0; i < wn->n; i++)
    bl_json_str (&w, NULL, wn->msg[i]);
  bl_json_arr_end (&w);
  if (status->code != BL_OK)
    bl_json_str (&w, "error", status->msg);
  else
    bl_json_null (&w, "error");
  bl_json_str (&w, "solver", st->solver);
  bl_json_obj_end (&w);

  if (info->against)
    bl_report_against_json (&w, info->against, st);
  bl_json_num (&w, "level", st->level);
  bl_json_str (&w, "se_kind", st->se_kind);
  if (!strcmp (st->se_kind, "cluster"))
    bl_json_size (&w, "clusters", st->clusters);
  bl_json_str (&w, "wald_kind", st->wald_is_t ? "t" : "z");
  if (st->dof_wald > 0)
    bl_json_size (&w, "ref_dof", st->dof_wald);
  else
    bl_json_null (&w, "ref_dof");

  coef_json (&w, fit);
  coef_reasons_json (&w, fit, info);
  fit_json (&w, fit);
  if (bl_json_finish (&w) || fflush (out) != 0)
    return bl_fail (err, BL_EIO, "output", "write failed");
  return BL_OK;
}
