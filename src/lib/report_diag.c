/* report_diag.c -- diagnostics and the residual table: const results in, text out. */
#include <math.h>
#include <string.h>
#include "report_impl.h"
#include "report.h"

/* REASON under KEY when VAL is not finite (a null in the document) and REASON is given. */
static void
why_num (bl_json *w, const char *key, double val, const char *reason)
{
  if (!isfinite (val))
    bl_json_str (w, key, reason && reason[0] ? reason : "not computed");
}

/* A variance test: its figures, or nulls with the reason it was skipped. */
static void
test_json (bl_json *w, const char *key, const bl_diag_test *t)
{
  bl_json_obj (w, key);
  if (t->done) {
    bl_json_num (w, "stat", t->stat);
    bl_json_size (w, "dof", t->dof);
    bl_json_num (w, "p", t->p);
    bl_json_num (w, "log10_p", t->log10_p);
  } else {
    bl_json_null (w, "stat");
    bl_json_null (w, "dof");
    bl_json_null (w, "p");
    bl_json_null (w, "log10_p");
    bl_json_str (w, "skipped", t->why);
    bl_json_obj (w, "null_reasons");
    bl_json_str (w, "stat", t->why);
    bl_json_str (w, "dof", t->why);
    bl_json_str (w, "p", t->why);
    bl_json_str (w, "log10_p", t->why);
    bl_json_obj_end (w);
  }
  bl_json_obj_end (w);
}

int
bl_report_diag_json (FILE *out, const bl_fit *fit, const bl_diag *dg,
                     const bl_report_info *info, bl_err *err)
{
  const bl_diag_result *r = bl_diag_get (dg);
  const bl_design *d = bl_fit_design (fit);
  bl_json w;
  bl_report_head_json (&w, out, info->tool_version, d, info->source);
  bl_json_obj (&w, "model");
  bl_json_str (&w, "method", bl_method_name (bl_fit_method (fit)));
  bl_json_str (&w, "family", bl_family_name (bl_fit_family (fit)));
  bl_json_str (&w, "link", bl_fit_link (fit)->name);
  bl_json_str (&w, "transform", bl_fit_transform (fit)->name);
  bl_json_str (&w, "response", bl_design_response (d));
  bl_json_obj (&w, "null_reasons");
  if (!bl_fit_transform (fit)->name)
    bl_json_str (&w, "transform", "no transform: y itself");
  bl_json_obj_end (&w);
  bl_json_obj_end (&w);
  bl_json_str (&w, "residual", "pearson");
  test_json (&w, "breusch_pagan", &r->breusch_pagan);
  test_json (&w, "koenker", &r->koenker);
  test_json (&w, "white", &r->white);
  bl_json_obj (&w, "spread");
  bl_json_num (&w, "ratio", r->spread.ratio);
  bl_json_num (&w, "null95", r->spread.null95);
  bl_json_bool (&w, "flag", r->spread.flag);
  bl_json_num (&w, "flag_at", BL_DIAG_SPREAD_FLAG);
  if (r->spread.why[0])
    bl_json_str (&w, "why_null", r->spread.why);
  bl_json_arr (&w, "groups");
  for (size_t g = 0; g < r->spread.ngroups; g++) {
    bl_json_obj (&w, NULL);
    bl_json_size (&w, "n", r->spread.groups[g].n);
    bl_json_num (&w, "fitted_mean", r->spread.groups[g].fitted_mean);
    bl_json_num (&w, "rms", r->spread.groups[g].rms);
    bl_json_obj_end (&w);
  }
  bl_json_arr_end (&w);
  bl_json_obj (&w, "null_reasons");
  if (r->spread.why[0]) {
    why_num (&w, "ratio", r->spread.ratio, r->spread.why);
    why_num (&w, "null95", r->spread.null95, r->spread.why);
  }
  bl_json_obj_end (&w);
  bl_json_obj_end (&w);
  bl_json_obj (&w, "variance_power");
  bl_json_num (&w, "estimate", r->power.estimate);
  bl_json_num (&w, "se", r->power.se);
  bl_json_num (&w, "lo", r->power.lo);
  bl_json_num (&w, "hi", r->power.hi);
  bl_json_size (&w, "groups_used", r->power.groups_used);
  bl_json_size (&w, "groups_left_out", r->power.groups_left_out);
  bl_json_str (&w, "mean_model", r->power.mean_model);
  if (r->power.done) {
    bl_json_bool (&w, "suggested_outside", r->power.suggested_outside);
  } else {
    bl_json_str (&w, "why_null", r->power.why);
  }
  bl_json_obj (&w, "null_reasons");
  {
    const char *pw = r->power.done ? "no standard error: the fit of log spread on log mean "
                                     "has no residual degrees of freedom" : r->power.why;
    why_num (&w, "estimate", r->power.estimate, r->power.why);
    why_num (&w, "se", r->power.se, pw);
    why_num (&w, "lo", r->power.lo, pw);
    why_num (&w, "hi", r->power.hi, pw);
  }
  bl_json_obj_end (&w);
  bl_json_obj_end (&w);
  bl_json_str (&w, "suggested_family", r->power.suggested);
  if (info->against)              /* the nested test (--against), as fit reports it */
    bl_report_against_json (&w, info->against, bl_fit_stats_get (fit));
  if (info->by) {
    const bl_bf *b = info->by;
    bl_json_obj (&w, "by");
    bl_json_str (&w, "column", b->column);
    bl_json_str (&w, "test", "brown-forsythe");
    bl_json_num (&w, "stat", b->stat);
    bl_json_size (&w, "dof", b->dof);
    bl_json_size (&w, "dof2", b->dof2);
    bl_json_num (&w, "p", b->p);
    bl_json_num (&w, "log10_p", b->log10_p);
    bl_json_arr (&w, "groups");
    for (size_t g = 0; g < b->ngroups; g++) {
      bl_json_obj (&w, NULL);
      bl_json_str (&w, "level", b->groups[g].level);
      bl_json_size (&w, "n", b->groups[g].n);
      bl_json_num (&w, "median", b->groups[g].median);
      bl_json_num (&w, "spread", b->groups[g].spread);
      bl_json_obj_end (&w);
    }
    bl_json_arr_end (&w);
    bl_json_obj_end (&w);
  }
  bl_json_obj (&w, "lack_of_fit");
  bl_json_bool (&w, "flag", r->lof.flag);
  bl_json_num (&w, "z", BL_DIAG_LOF_Z);
  bl_json_arr (&w, "groups");
  for (size_t g = 0; g < r->lof.ngroups; g++) {
    const bl_lof_group *q = &r->lof.groups[g];
    bl_json_obj (&w, NULL);
    bl_json_str (&w, "against", q->against);
    bl_json_size (&w, "n", q->n);
    bl_json_num (&w, "x_mean", q->x_mean);
    bl_json_num (&w, "resid_mean", q->resid_mean);
    bl_json_num (&w, "se", q->se);
    bl_json_bool (&w, "flag", q->flag);
    bl_json_obj_end (&w);
  }
  bl_json_arr_end (&w);
  bl_json_obj_end (&w);
  bl_json_obj (&w, "null_reasons");
  if (!r->power.suggested)
    bl_json_str (&w, "suggested_family", r->power.done
                 ? "no family's variance power lies inside the interval of K"
                 : r->power.why);
  bl_json_obj_end (&w);
  bl_json_obj_end (&w);
  if (bl_json_finish (&w) || fflush (out) != 0)
    return bl_fail (err, BL_EIO, "output", "write failed");
  return BL_OK;
}

static void
test_text (FILE *o, const char *name, const bl_diag_test *t)
{
  if (t->done && !(t->p < 1e-300))
    fprintf (o, "    %-34s %12.4f   dof %-4zu   p %.4g\n", name, t->stat, t->dof, t->p);
  else if (t->done)                 /* p beyond the doubles' reach: its log10 (log space) */
    fprintf (o, "    %-34s %12.4f   dof %-4zu   p < 1e-300 (log10 p = %.1f)\n", name,
             t->stat, t->dof, t->log10_p);
  else
    fprintf (o, "    %-34s %12s   (%s)\n", name, "--", t->why);
}

int
bl_report_diag_text (FILE *o, const bl_fit *fit, const bl_diag *dg,
                     const bl_report_info *info, bl_err *err)
{
  const bl_diag_result *r = bl_diag_get (dg);
  const bl_design *d = bl_fit_design (fit);
  fprintf (o, "ballast %s -- is the spread constant?\n\n", info->tool_version);
  fprintf (o, "  data        %s: %zu rows used of %zu\n", info->source, bl_design_n (d),
           bl_design_rows_read (d));
  fprintf (o, "  model       %s, %s family, %s link%s%s; residuals: Pearson\n",
           bl_method_name (bl_fit_method (fit)), bl_family_name (bl_fit_family (fit)),
           bl_fit_link (fit)->name, bl_fit_transform (fit)->name ? ", transform " : "",
           bl_fit_transform (fit)->name ? bl_fit_transform (fit)->name : "");
  fputs ("\n  First, the mean model (variance tests also fire when it is wrong)\n", o);
  if (r->lof.flag) {
    fputs ("    FLAG: residual means drift away from zero in these bins (beyond 3 se):\n", o);
    for (size_t g = 0; g < r->lof.ngroups; g++)
      if (r->lof.groups[g].flag)
        fprintf (o, "      against %-20s near %-12.5g mean %+.4g (se %.3g, n %zu)\n",
                 r->lof.groups[g].against, r->lof.groups[g].x_mean,
                 r->lof.groups[g].resid_mean, r->lof.groups[g].se, r->lof.groups[g].n);
  } else {
    fputs ("    no bin of fitted values or numeric terms has a residual mean beyond 3 se\n", o);
  }
  fputs ("\n  Tests of constant variance\n", o);
  test_text (o, "Breusch-Pagan (1979)", &r->breusch_pagan);
  test_text (o, "Koenker (1981), studentized", &r->koenker);
  test_text (o, "White (1980)", &r->white);
  fputs ("\n  Spread by fitted value\n", o);
  if (r->spread.ngroups) {
    fprintf (o, "    %-8s %8s %16s %14s\n", "group", "rows", "mean fitted", "rms residual");
    for (size_t g = 0; g < r->spread.ngroups; g++)
      fprintf (o, "    %-8zu %8zu %16.6g %14.6g\n", g + 1, r->spread.groups[g].n,
               r->spread.groups[g].fitted_mean, r->spread.groups[g].rms);
    fprintf (o, "    largest / smallest rms = %.4g (95%% point under constant variance %.4g)"
             "%s\n", r->spread.ratio, r->spread.null95,
             r->spread.flag ? ": FLAG, the spread changes with the level" : "");
  } else {
    fprintf (o, "    (%s)\n", r->spread.why);
  }
  if (info->by) {
    const bl_bf *b = info->by;
    fprintf (o, "\n  Spread by '%s' (Brown-Forsythe): F = %.4g (dof %zu, %zu), p %.4g\n",
             b->column, b->stat, b->dof, b->dof2, b->p);
    fprintf (o, "    %-20s %8s %14s %16s\n", "level", "rows", "median resid", "mean |r - med|");
    for (size_t g = 0; g < b->ngroups; g++)
      fprintf (o, "    %-20.20s %8zu %14.5g %16.5g\n", b->groups[g].level, b->groups[g].n,
               b->groups[g].median, b->groups[g].spread);
  }
  if (info->against) {            /* the nested test (--against), as fit reports it */
    const bl_nested *a = info->against;
    fprintf (o, "\n  Against the smaller model (%s)\n", a->terms[0] ? a->terms : "intercept");
    fprintf (o, "    deviance %.6g there, %.6g here: ", a->deviance_small, a->deviance_big);
    if (a->dof2)
      fprintf (o, "F = %.4g on %zu and %zu dof, p %.4g\n", a->stat, a->dof, a->dof2, a->p);
    else
      fprintf (o, "chi2 = %.4g on %zu dof, p %.4g\n", a->stat, a->dof, a->p);
  }
  fputs ("\n  How the variance grows with the mean\n", o);
  if (r->power.done) {
    fprintf (o, "    power K in Var = c mu^K: %.3g (se %.3g, 95%% interval %.3g to %.3g) from "
             "%zu groups%s\n", r->power.estimate, r->power.se, r->power.lo, r->power.hi,
             r->power.groups_used,
             r->power.groups_left_out ? " (some left out: mean fitted <= 0)" : "");
    fprintf (o, "    residuals from: %s\n", !strcmp (r->power.mean_model, "model")
             ? "this model's fitted means" : !strcmp (r->power.mean_model, "gamma/log")
             ? "a gamma fit with the log link of the same terms (y > 0)"
             : !strcmp (r->power.mean_model, "poisson/log")
             ? "a poisson fit with the log link of the same terms (counts)"
             : r->power.mean_model);
    fprintf (o, "    nearest family: %s (K = %g)", r->power.suggested, r->power.suggested_power);
    if (r->power.suggested_outside)
      fprintf (o, ", but K = %g lies outside the interval: no listed family's variance fits "
               "well", r->power.suggested_power);
    fputc ('\n', o);
  } else {
    fprintf (o, "    (%s)\n", r->power.why);
  }
  fputs ("\n  These checks are evidence, not proof: they guide the choice of a remedy, which\n"
         "  should be validated on new data before acting on it.\n", o);
  if (fflush (o) != 0 || ferror (o))
    return bl_fail (err, BL_EIO, "output", "write failed");
  return BL_OK;
}

int
bl_report_residuals_csv (FILE *o, const bl_fit *fit, const bl_resid_table *t,
                         volatile sig_atomic_t *cancel, bl_err *err)
{
  const bl_design *d = bl_fit_design (fit);
  const double *mu = bl_fit_mu (fit);
  fputs ("row,fitted,response,pearson,deviance,working,quantile,leverage,cooks\n", o);
  for (size_t i = 0; i < t->n; i++) {
    if (cancel && i % 4096 == 0 && *cancel)
      return bl_fail (err, BL_ECANCEL, "output", "writing the residual table was cancelled");
    const double v[8] = { mu[i], t->response[i], t->pearson[i], t->deviance[i], t->working[i],
                          t->quantile[i], t->leverage[i], t->cooks[i] };
    fprintf (o, "%zu", bl_design_table_row (d, i) + 1);
    for (int k = 0; k < 8; k++) {
      if (isfinite (v[k]))
        fprintf (o, ",%.17g", v[k]);
      else
        fputs (",", o);
    }
    fputc ('\n', o);
  }
  if (fflush (o) != 0 || ferror (o))
    return bl_fail (err, BL_EIO, "output", "write failed");
  return BL_OK;
}
