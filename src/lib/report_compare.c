/* report_compare.c -- the ranked table of candidates, as JSON or as text. */
#include <math.h>
#include <string.h>
#include "report_impl.h"
#include "report.h"

/* The first of K's notes that starts with PREFIX (any note when PREFIX is empty), or NULL. */
static const char *
note_with (const bl_candidate *k, const char *prefix)
{
  for (size_t j = 0; j < k->notes.n; j++)
    if (strncmp (k->notes.msg[j], prefix, strlen (prefix)) == 0)
      return k->notes.msg[j];
  return NULL;
}

/* One reason under KEY when VAL is null (not finite); FALLBACK when NOTE is NULL. */
static void
reason (bl_json *w, const char *key, double val, const char *note, const char *fallback)
{
  if (!isfinite (val))
    bl_json_str (w, key, note ? note : fallback);
}

/* The candidate's own "null_reasons": a reason for each of its null figures (doc/json.md,
   "Null values").  A candidate left out or not fitted has that reason for every figure; a
   fitted one has a reason per figure: the parameter it does not have, y not integer-valued
   (no discretized likelihood) or a row without mass, no folds or a fold that failed, too
   few rows for the spread ratio, not ranked. */
static void
candidate_reasons (bl_json *w, const bl_compare *c, const bl_candidate *k)
{
  static const char *const all[] = {"loglik", "aic", "aicc", "bic", "loglik_discrete",
                                    "aic_discrete", "delta_aic", "akaike_weight", "cv_rmse",
                                    "cv_mae", "spread_ratio", "spread_null95",
                                    "normality_stat", "normality_p"};
  const int bc = k->transform && strcmp (k->transform, "boxcox") == 0;
  const int ranked_discrete = strcmp (bl_compare_rank_by (c), "aic_discrete") == 0;
  const char *fail = NULL;
  bl_json_obj (w, "null_reasons");
  if (!k->transform)
    bl_json_str (w, "transform", "no transform: the candidate models y itself");
  reason (w, "lambda", k->lambda, NULL, bc ? "not fitted" : "not a Box-Cox candidate");
  reason (w, "variance_power", k->variance_power, NULL,
          strcmp (k->method, "wls") == 0 ? "not fitted"
          : "not a weighted least-squares candidate (no variance power K)");
  reason (w, "theta", k->theta, NULL, strcmp (k->family, "negative-binomial") == 0
          ? "not fitted" : "not a negative binomial candidate (no theta)");
  reason (w, "power", k->power, NULL, strcmp (k->family, "tweedie") == 0
          ? "not fitted" : "not a Tweedie candidate (no power p)");
  if (!k->applicable)
    fail = note_with (k, "");
  else if (!k->converged)
    fail = note_with (k, "");
  if (!k->applicable || !k->converged) {
    const char *r = fail ? fail : k->applicable ? "the fit did not converge" : "not applicable";
    if (!k->converged) {
      bl_json_str (w, "k", r);
      bl_json_str (w, "rank", r);
    }
    for (size_t j = 0; j < sizeof all / sizeof all[0]; j++)
      bl_json_str (w, all[j], r);
    bl_json_str (w, "position", r);
    bl_json_obj_end (w);
    return;
  }
  reason (w, "loglik", k->loglik, NULL, "no log-likelihood at the fit");
  reason (w, "aic", k->aic, NULL, "no log-likelihood at the fit");
  reason (w, "aicc", k->aicc, NULL, k->n > k->k + 1 ? "no log-likelihood at the fit"
          : "AICc needs more rows than parameters + 1");
  reason (w, "bic", k->bic, NULL, "no log-likelihood at the fit");
  if (!bl_compare_integer_y (c)) {
    reason (w, "loglik_discrete", k->loglik_discrete, NULL,
            "y is not integer-valued: no discretized likelihood");
    reason (w, "aic_discrete", k->aic_discrete, NULL,
            "y is not integer-valued: no discretized likelihood");
  } else {
    const char *m = note_with (k, "not ranked: the discretized likelihood");
    reason (w, "loglik_discrete", k->loglik_discrete, m, "no discretized likelihood");
    reason (w, "aic_discrete", k->aic_discrete, m, "no discretized likelihood");
  }
  {
    const double rk = ranked_discrete ? k->aic_discrete : k->aic;
    const char *r = !isfinite (rk) ? "not ranked: no figure on the ranking scale"
                    : "not ranked";
    reason (w, "delta_aic", k->delta_aic, NULL, r);
    reason (w, "akaike_weight", k->akaike_weight, NULL, r);
    if (!k->rank_position)
      bl_json_str (w, "position", r);
  }
  {
    const char *m = note_with (k, "cross-validation");
    const char *r = bl_compare_folds (c) == 0 ? "no cross-validation: 0 folds"
                    : "cross-validation gave no figure";
    reason (w, "cv_rmse", k->cv_rmse, m, r);
    reason (w, "cv_mae", k->cv_mae, m, r);
  }
  {
    const char *r = k->n < 40 ? "fewer than 40 rows: no spread ratio"
                    : "a group of rows by fitted value has zero spread: no ratio";
    reason (w, "spread_ratio", k->spread_ratio, NULL, r);
    reason (w, "spread_null95", k->spread_null95, NULL, r);
  }
  reason (w, "normality_stat", k->normality_stat, NULL, "no quantile residuals");
  reason (w, "normality_p", k->normality_p, NULL, "no quantile residuals");
  bl_json_obj_end (w);
}

int
bl_report_compare_json (FILE *out, const bl_compare *c, const bl_design *d,
                        const bl_report_info *info, bl_err *err)
{
  const long win = bl_compare_winner (c);
  const bl_warnings *adv = bl_compare_advice (c);
  bl_json w;
  bl_report_head_json (&w, out, info->tool_version, d, info->source);
  bl_json_str (&w, "response", bl_design_response (d));
  bl_json_bool (&w, "integer_y", bl_compare_integer_y (c));
  bl_json_str (&w, "rank_by", bl_compare_rank_by (c));
  bl_json_bool (&w, "ranked_by_group", bl_compare_zero_groups (c));
  bl_json_size (&w, "folds", bl_compare_folds (c));
  bl_json_size (&w, "seed", (size_t) bl_compare_seed (c));
  bl_json_arr (&w, "candidates");
  for (size_t i = 0; i < bl_compare_count (c); i++) {
    const bl_candidate *k = bl_compare_get (c, i);
    bl_json_obj (&w, NULL);
    bl_json_str (&w, "id", k->id);
    bl_json_str (&w, "description", k->description);
    bl_json_str (&w, "method", k->method);
    bl_json_str (&w, "family", k->family);
    bl_json_str (&w, "link", k->link);
    bl_json_str (&w, "transform", k->transform);
    bl_json_num (&w, "lambda", k->lambda);
    bl_json_num (&w, "variance_power", k->variance_power);
    bl_json_num (&w, "theta", k->theta);
    bl_json_num (&w, "power", k->power);
    if (k->group)
      bl_json_str (&w, "group", k->group);
    bl_json_bool (&w, "applicable", k->applicable);
    bl_json_size (&w, "n", k->n);
    if (k->converged) {
      bl_json_size (&w, "k", k->k);
      bl_json_size (&w, "rank", k->rank);
    } else {
      bl_json_null (&w, "k");
      bl_json_null (&w, "rank");
    }
    bl_json_num (&w, "loglik", k->loglik);
    bl_json_num (&w, "aic", k->aic);
    bl_json_num (&w, "aicc", k->aicc);
    bl_json_num (&w, "bic", k->bic);
    bl_json_num (&w, "loglik_discrete", k->loglik_discrete);
    bl_json_num (&w, "aic_discrete", k->aic_discrete);
    bl_json_num (&w, "delta_aic", k->delta_aic);
    bl_json_num (&w, "akaike_weight", k->akaike_weight);
    bl_json_num (&w, "cv_rmse", k->cv_rmse);
    bl_json_num (&w, "cv_mae", k->cv_mae);
    bl_json_num (&w, "spread_ratio", k->spread_ratio);
    bl_json_num (&w, "spread_null95", k->spread_null95);
    bl_json_num (&w, "normality_stat", k->normality_stat);
    bl_json_num (&w, "normality_p", k->normality_p);
    bl_json_bool (&w, "converged", k->converged);
    if (k->rank_position)
      bl_json_size (&w, "position", k->rank_position);
    else
      bl_json_null (&w, "position");
    bl_json_arr (&w, "notes");
    for (size_t j = 0; j < k->notes.n; j++)
      bl_json_str (&w, NULL, k->notes.msg[j]);
    bl_json_arr_end (&w);
    candidate_reasons (&w, c, k);
    bl_json_obj_end (&w);
  }
  bl_json_arr_end (&w);
  bl_json_str (&w, "recommended", win >= 0 ? bl_compare_get (c, (size_t) win)->id : NULL);
  bl_json_arr (&w, "advice");
  for (size_t j = 0; j < adv->n; j++)
    bl_json_str (&w, NULL, adv->msg[j]);
  bl_json_arr_end (&w);
  bl_json_obj (&w, "null_reasons");
  if (win < 0)
    bl_json_str (&w, "recommended", "no candidate could be fitted");
  bl_json_obj_end (&w);
  bl_json_obj_end (&w);
  if (bl_json_finish (&w) || fflush (out) != 0)
    return bl_fail (err, BL_EIO, "output", "write failed");
  return BL_OK;
}

static void
cell (FILE *o, int width, int prec, double v)
{
  if (isfinite (v))
    fprintf (o, " %*.*f", width, prec, v);
  else
    fprintf (o, " %*s", width, "--");
}

int
bl_report_compare_text (FILE *o, const bl_compare *c, const bl_design *d,
                        const bl_report_info *info, bl_err *err)
{
  const size_t nc = bl_compare_count (c);
  const bl_warnings *adv = bl_compare_advice (c);
  const int disc = bl_compare_integer_y (c);
  size_t order[BL_COMPARE_MAX], m = 0;
  fprintf (o, "ballast %s -- variance treatments side by side\n\n", info->tool_version);
  fprintf (o, "  data        %s: %zu rows, the same for every candidate\n", info->source,
           bl_design_n (d));
  fprintf (o, "  response    %s%s\n", bl_design_response (d),
           disc ? " (integer-valued: continuous candidates scored by the discretized "
                  "likelihood)" : "");
  fprintf (o, "  ranked by   %s; cross-validation: %zu folds, seed %lu\n\n",
           disc ? "AIC of the discretized likelihood" : "AIC on y's scale",
           bl_compare_folds (c), bl_compare_seed (c));
  /* ranked first (by group when y has exact zeros: point-mass, then continuous), then the
     unranked in table order */
  for (int g = 0; g < (bl_compare_zero_groups (c) ? 2 : 1); g++)
    for (size_t pos = 1; pos <= nc; pos++)
      for (size_t i = 0; i < nc; i++) {
        const bl_candidate *k = bl_compare_get (c, i);
        if (k->rank_position == pos
            && (!k->group || strcmp (k->group, g == 0 ? "point-mass" : "continuous") == 0))
          order[m++] = i;
      }
  for (size_t i = 0; i < nc; i++)
    if (!bl_compare_get (c, i)->rank_position)
      order[m++] = i;
  fprintf (o, "    %-3s %-10s %4s %13s %10s %7s %11s %11s %8s %9s\n", "#", "candidate", "k",
           disc ? "AIC (discr.)" : "AIC", "delta", "weight", "cv RMSE", "cv MAE", "spread",
           "normal p");
  for (size_t r = 0; r < m; r++) {
    const bl_candidate *k = bl_compare_get (c, order[r]);
    if (k->rank_position)
      fprintf (o, "    %-3zu", k->rank_position);
    else
      fprintf (o, "    %-3s", "-");
    fprintf (o, " %-10s", k->id);
    if (k->converged)
      fprintf (o, " %4zu", k->k);
    else
      fprintf (o, " %4s", "--");
    cell (o, 13, 2, disc ? k->aic_discrete : k->aic);
    cell (o, 10, 2, k->delta_aic);
    cell (o, 7, 3, k->akaike_weight);
    cell (o, 11, 4, k->cv_rmse);
    cell (o, 11, 4, k->cv_mae);
    cell (o, 8, 2, k->spread_ratio);
    cell (o, 9, 3, k->normality_p);
    fputc ('\n', o);
  }
  fputs ("\n  Candidates\n", o);
  for (size_t r = 0; r < m; r++) {
    const bl_candidate *k = bl_compare_get (c, order[r]);
    fprintf (o, "    %-10s %s", k->id, k->description);
    if (isfinite (k->lambda))
      fprintf (o, " (lambda %.4g)", k->lambda);
    if (isfinite (k->variance_power))
      fprintf (o, " (K %.4g)", k->variance_power);
    if (isfinite (k->theta))
      fprintf (o, " (theta %.4g)", k->theta);
    if (isfinite (k->power))
      fprintf (o, " (p %.4g)", k->power);
    if (k->group)
      fprintf (o, " [%s group]", k->group);
    fputc ('\n', o);
    for (size_t j = 0; j < k->notes.n; j++)
      fprintf (o, "               - %s\n", k->notes.msg[j]);
  }
  fputs ("\n  What the table says\n", o);
  for (size_t j = 0; j < adv->n; j++)
    fprintf (o, "    * %s\n", adv->msg[j]);
  fputs ("\n  spread: largest / smallest rms Pearson residual across 5 groups by fitted value "
         "(about 1 when\n  the variance model is right); normal p: Kolmogorov-Smirnov test of "
         "the quantile residuals.\n", o);
  if (fflush (o) != 0 || ferror (o))
    return bl_fail (err, BL_EIO, "output", "write failed");
  return BL_OK;
}
