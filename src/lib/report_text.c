/* report_text.c -- the fit as a report for people.

   Layout (ballast's own): a header block of labelled lines, then the estimates table with
   the interval beside each estimate, then the fit figures in two columns, then warnings.
   Numbers that do not exist print as "--" with the reason underneath. */
#include <math.h>
#include <string.h>
#include "report.h"

static void
num (FILE *o, int width, double v)
{
  if (!isfinite (v))
    fprintf (o, "%*s", width, "--");
  else if (v != 0.0 && (fabs (v) >= 1e7 || fabs (v) < 1e-4))
    fprintf (o, "%*.4e", width, v);
  else
    fprintf (o, "%*.6g", width, v);
}

/* A p-value; below 1e-300, where the double loses its digits or is 0, its log10 from the
   log-space tail (LOG10P) as 10^x. */
static void
pval (FILE *o, int width, double v, double log10p)
{
  if (!isfinite (v))
    fprintf (o, "%*s", width, "--");
  else if (v < 1e-300 && isfinite (log10p)) {
    char b[32];
    snprintf (b, sizeof b, "10^%.1f", log10p);
    fprintf (o, "%*s", width, b);
  } else if (v < 1e-300)
    fprintf (o, "%*s", width, "<1e-300");
  else if (v < 1e-4)
    fprintf (o, "%*.1e", width, v);
  else
    fprintf (o, "%*.4f", width, v);
}

/* The "variance" lines: the method, transform or family, with its estimated parameters. */
static void
variance_text (FILE *o, const bl_fit *fit, const bl_report_info *info)
{
  const bl_design *d = bl_fit_design (fit);
  const bl_fit_stats *st = bl_fit_stats_get (fit);
  const bl_fit_transform_info *t = bl_fit_transform (fit);
  const bl_fit_variance_info *v = bl_fit_variance (fit);
  if (bl_fit_method (fit) == BL_METHOD_WLS) {
    fprintf (o, "  variance    weighted least squares, Var y = sigma^2 %s%s\n",
             v->kind == BL_VARIANCE_NONE ? "/ weight" : v->expr,
             v->kind != BL_VARIANCE_NONE && info->weights ? " / weight" : "");
    if (v->power_estimated && isfinite (v->power_se))
      fprintf (o, "              power K = %.6g (standard error %.3g), by maximum "
               "likelihood\n", v->power, v->power_se);
    else if (v->power_estimated)
      fprintf (o, "              power K = %.6g (no standard error: the observed "
               "information is not positive), by maximum likelihood\n", v->power);
  } else if (t->kind != BL_TRANSFORM_NONE) {
    fprintf (o, "  variance    ordinary least squares of %s(%s%s)", t->name,
             bl_design_response (d), t->shift_given ? " + shift" : "");
    if (t->kind == BL_TRANSFORM_BOXCOX)
      fprintf (o, ", lambda = %.6g%s", t->lambda, t->lambda_estimated ? " (estimated)" : "");
    fputc ('\n', o);
    if (t->lambda_estimated) {
      fputs ("              95% profile interval for lambda: ", o);
      if (isfinite (t->lambda_lo))
        fprintf (o, "%.6g", t->lambda_lo);
      else
        fputs ("open below -3", o);
      fputs (" to ", o);
      if (isfinite (t->lambda_hi))
        fprintf (o, "%.6g", t->lambda_hi);
      else
        fputs ("open above 3", o);
      if (isfinite (t->lambda_practical))
        fprintf (o, "; a round power inside it: %g\n", t->lambda_practical);
      else
        fputs ("; no multiple of 0.5 inside it\n", o);
    }
    if (t->shift_given)
      fprintf (o, "              y was shifted by %g: results depend on that choice\n",
               t->shift);
    fputs ("              estimates are on the transformed scale; the likelihood figures "
           "are on y's\n", o);
  } else {
    fprintf (o, "  variance    %s family, %s link (%s)\n", bl_family_name (bl_fit_family (fit)),
             bl_fit_link (fit)->name, bl_fit_method (fit) == BL_METHOD_OLS
             ? "ordinary least squares" : "maximum likelihood by IRLS");
    if (bl_family_par_kind (bl_fit_family (fit)) == BL_FAMPAR_THETA) {
      if (isfinite (st->fam_par) && !st->fam_par_est)
        fprintf (o, "              theta = %.6g, fixed: Var = mu + mu^2 / theta\n",
                 st->fam_par);
      else if (isfinite (st->fam_par) && isfinite (st->fam_par_se))
        fprintf (o, "              theta = %.6g (standard error %.3g), estimated: Var = mu + "
                 "mu^2 / theta\n", st->fam_par, st->fam_par_se);
      else if (isfinite (st->fam_par))
        fprintf (o, "              theta = %.6g (no standard error: the observed information "
                 "is not positive), estimated: Var = mu + mu^2 / theta\n", st->fam_par);
      else
        fprintf (o, "              theta: %s\n", st->fam_par_why);
    } else if (bl_family_par_kind (bl_fit_family (fit)) == BL_FAMPAR_POWER) {
      fprintf (o, "              power p = %.5g%s: Var = phi mu^p", st->fam_par,
               st->fam_par_est ? " (estimated)" : " (fixed)");
      if (st->fam_par_est) {
        fputs ("; 95% profile interval ", o);
        if (isfinite (st->fam_par_lo))
          fprintf (o, "%.4g", st->fam_par_lo);
        else
          fputs ("open below the search range", o);
        fputs (" to ", o);
        if (isfinite (st->fam_par_hi))
          fprintf (o, "%.4g", st->fam_par_hi);
        else
          fputs ("open above the search range", o);
      }
      fputc ('\n', o);
    }
  }
}

/* The estimates table with the interval beside each estimate. */
static void
estimates_text (FILE *o, const bl_fit *fit)
{
  const bl_design *d = bl_fit_design (fit);
  const bl_fit_stats *st = bl_fit_stats_get (fit);
  const size_t p = bl_design_p (d);
  size_t lw = 9;

  for (size_t j = 0; j < p; j++)
    if (strlen (bl_design_label (d, j)) > lw)
      lw = strlen (bl_design_label (d, j));
  if (lw > 40)
    lw = 40;
  fprintf (o, "\n  Estimates   (%g%% interval; %s-ratio", 100.0 * st->level,
           st->wald_is_t ? "t" : "z");
  if (st->wald_is_t && !strcmp (st->se_kind, "cluster"))
    fprintf (o, ", reference t with %zu dof = clusters - 1", st->dof_wald);
  else if (st->wald_is_t)
    fprintf (o, ", reference t with %zu dof", st->dof_wald);
  else
    fputs (", reference normal", o);
  if (!strcmp (st->se_kind, "cluster"))
    fprintf (o, ";\n              standard errors: cluster, %zu clusters)\n\n", st->clusters);
  else
    fprintf (o, "; standard errors: %s)\n\n", st->se_kind);
  fprintf (o, "    %-*s %13s %13s %13s  %12s %10s %11s\n", (int) lw, "term", "estimate", "low",
           "high", "std error", st->wald_is_t ? "t-ratio" : "z-ratio", "p, 2-sided");
  for (size_t j = 0; j < p; j++) {
    fprintf (o, "    %-*.*s ", (int) lw, (int) lw, bl_design_label (d, j));
    if (bl_fit_aliased (fit)[j]) {
      fprintf (o, "%13s   (aliased: left out)\n", "--");
      continue;
    }
    num (o, 13, bl_fit_beta (fit)[j]);
    fputc (' ', o);
    num (o, 13, bl_fit_lo (fit)[j]);
    fputc (' ', o);
    num (o, 13, bl_fit_hi (fit)[j]);
    fputs ("  ", o);
    num (o, 12, bl_fit_se (fit)[j]);
    fputc (' ', o);
    num (o, 10, bl_fit_wald (fit)[j]);
    fputc (' ', o);
    pval (o, 11, bl_fit_pvalue (fit)[j], bl_fit_log10p (fit)[j]);
    fputc ('\n', o);
  }
}

/* One row of the figures table: name, value, and the residual dof when it has one. */
static void
figure_row (FILE *o, const char *name, double v, int has_dof, size_t dof)
{
  fprintf (o, "    %-30s", name);
  num (o, 14, v);
  if (has_dof)
    fprintf (o, " %10zu", dof);
  fputc ('\n', o);
}

/* The fit figures as a table (figure, value, residual dof), then the reasons for the missing
   ones.  Layout: ballast's own. */
static void
figures_text (FILE *o, const bl_fit *fit)
{
  const bl_fit_stats *st = bl_fit_stats_get (fit);
  const int tr = bl_fit_transform (fit)->kind != BL_TRANSFORM_NONE;
  fprintf (o, "\n  Fit         %zu rows, rank %zu, %zu parameters counted (k)\n\n", st->n,
           st->rank, st->k);
  fprintf (o, "    %-30s%14s %10s\n", "figure", "value", "resid. dof");
  figure_row (o, "deviance, this model", st->deviance, 1, st->dof_resid);
  figure_row (o, "deviance, intercept only", st->deviance_null, 1, st->dof_null);
  figure_row (o, "Pearson X2", st->pearson, 1, st->dof_resid);
  figure_row (o, "dispersion, Pearson", st->phi_pearson, 0, 0);
  figure_row (o, "dispersion, max. likelihood", st->phi_ml, 0, 0);
  figure_row (o, tr ? "log-likelihood, y's scale" : "log-likelihood", st->loglik, 0, 0);
  if (tr)
    figure_row (o, "log-likelihood, transformed", st->loglik_transformed, 0, 0);
  figure_row (o, "AIC", st->aic, 0, 0);
  figure_row (o, "AICc", st->aicc, 0, 0);
  figure_row (o, "BIC", st->bic, 0, 0);
  if (!isfinite (st->loglik) && st->loglik_why[0])
    fprintf (o, "    (no likelihood figures: %s)\n", st->loglik_why);
  else if (!isfinite (st->aicc) && st->aicc_why && st->aicc_why[0])
    fprintf (o, "    (no AICc: %s)\n", st->aicc_why);
  if (!isfinite (st->deviance_null) && st->deviance_null_why[0])
    fprintf (o, "    (no intercept-only deviance: %s)\n", st->deviance_null_why);
  if (!isfinite (st->phi_ml) && st->phi_ml_why && st->phi_ml_why[0] && isfinite (st->loglik))
    fprintf (o, "    (no maximum-likelihood dispersion: %s)\n", st->phi_ml_why);
}

/* The nested test: both models' log-likelihoods and deviances, then the statistic, named. */
static void
against_text (FILE *o, const bl_nested *a)
{
  fprintf (o, "\n  Against the smaller model (%s)\n", a->terms[0] ? a->terms : "intercept");
  fprintf (o, "    %-30s%14s %14s\n", "", "smaller", "this model");
  fprintf (o, "    %-30s", "log-likelihood");
  num (o, 14, a->loglik_small);
  fputc (' ', o);
  num (o, 14, a->loglik_big);
  fprintf (o, "\n    %-30s", "deviance");
  num (o, 14, a->deviance_small);
  fputc (' ', o);
  num (o, 14, a->deviance_big);
  fputc ('\n', o);
  if (isfinite (a->fam_par_small) || isfinite (a->fam_par_big)) {
    fprintf (o, "    %-30s", "family parameter");
    num (o, 14, a->fam_par_small);
    fputc (' ', o);
    num (o, 14, a->fam_par_big);
    fputs ("\n    (each model has its own parameter, so the deviances do not subtract)\n", o);
  }
  if (!strcmp (a->statistic, "likelihood-ratio"))
    fputs ("    test: likelihood ratio 2 (l this - l smaller), chi-square", o);
  else if (a->dof2)
    fputs ("    test: deviance drop per dof over the Pearson dispersion, F", o);
  else
    fputs ("    test: deviance drop, chi-square", o);
  if (a->dof2)
    fprintf (o, " (dof %zu, %zu): ", a->dof, a->dof2);
  else
    fprintf (o, " (dof %zu): ", a->dof);
  if (isfinite (a->stat) && isfinite (a->p) && !(a->p < 1e-300))
    fprintf (o, "%.4g, p %.4g\n", a->stat, a->p);
  else if (isfinite (a->stat) && isfinite (a->p))  /* beyond the doubles: its log10 */
    fprintf (o, "%.4g, p < 1e-300 (log10 p = %.1f)\n", a->stat, a->log10_p);
  else
    fputs ("-- (a likelihood or deviance does not exist)\n", o);
}

int
bl_report_fit_text (FILE *o, const bl_fit *fit, const bl_report_info *info, bl_err *err)
{
  const bl_design *d = bl_fit_design (fit);
  const bl_fit_stats *st = bl_fit_stats_get (fit);
  const bl_warnings *wn = bl_fit_warnings (fit);
  size_t dropped = 0;
  char buf[4096];

  for (size_t i = 0; i < bl_design_ndrop (d); i++) {
    size_t c;
    bl_design_drop_reason (d, i, &c);
    dropped += c;
  }
  fprintf (o, "ballast %s -- one model, fitted\n\n", info->tool_version);
  fprintf (o, "  data        %s: %zu rows read, %zu used, %zu set aside\n", info->source,
           bl_design_rows_read (d), bl_design_n (d), dropped);
  for (size_t i = 0; i < bl_design_ndrop (d); i++) {
    size_t c;
    const char *r = bl_design_drop_reason (d, i, &c);
    fprintf (o, "                %zu with %s\n", c, r);
  }
  fprintf (o, "  response    %s\n", bl_design_response (d));
  if (info->terms) {
    bl_terms_text (info->terms, buf, sizeof buf);
    fprintf (o, "  terms       %s%s\n", bl_design_has_intercept (d) ? "intercept, " : "", buf);
  }
  if (info->offset)
    fprintf (o, "  offset      %s\n", bl_terms_get (info->offset, 0)->label);
  if (info->weights)
    fprintf (o, "  weights     %s\n", info->weights);
  variance_text (o, fit, info);
  if (st->converged)
    fprintf (o, "  outcome     converged after %zu iteration%s, solver %s\n", st->iterations,
             st->iterations == 1 ? "" : "s", st->solver);
  else
    fprintf (o, "  outcome     FAILED: %s\n", bl_fit_status (fit)->msg);

  estimates_text (o, fit);
  figures_text (o, fit);

  if (info->against)
    against_text (o, info->against);
  if (wn->n) {
    fputs ("\n  Warnings\n", o);
    for (size_t i = 0; i < wn->n; i++)
      fprintf (o, "    * %s\n", wn->msg[i]);
  }
  fputs ("\n  A fit is evidence about the data, not proof: check the residuals and validate on"
         " new data\n  before acting on it.\n", o);
  if (fflush (o) != 0 || ferror (o))
    return bl_fail (err, BL_EIO, "output", "write failed");
  return BL_OK;
}
