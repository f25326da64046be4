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

static void
pval (FILE *o, int width, double v)
{
  if (!isfinite (v))
    fprintf (o, "%*s", width, "--");
  else if (v < 1e-300)
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
    if (v->power_estimated)
      fprintf (o, "              power K = %.6g (standard error %.3g), by maximum "
               "likelihood\n", v->power, v->power_se);
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
      if (isfinite (st->fam_par))
        fprintf (o, "              theta = %.6g (standard error %.3g)%s: Var = mu + mu^2 / "
                 "theta\n", st->fam_par, st->fam_par_se, st->fam_par_est ? ", estimated"
                 : ", fixed");
      else
        fprintf (o, "              theta: %s\n", st->fam_par_why);
    } else if (bl_family_par_kind (bl_fit_family (fit)) == BL_FAMPAR_POWER) {
      fprintf (o, "              power p = %.5g%s: Var = phi mu^p", st->fam_par,
               st->fam_par_est ? " (estimated)" : " (fixed)");
      if (st->fam_par_est)
        fprintf (o, "; 95%% profile interval %.4g to %.4g", st->fam_par_lo, st->fam_par_hi);
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
  if (st->wald_is_t)
    fprintf (o, " on %zu residual dof", st->dof_resid);
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
    pval (o, 11, bl_fit_pvalue (fit)[j]);
    fputc ('\n', o);
  }
}

/* The fit figures in two columns, with the reasons for the missing ones. */
static void
figures_text (FILE *o, const bl_fit *fit)
{
  const bl_fit_stats *st = bl_fit_stats_get (fit);
  fprintf (o, "\n  Fit         rows %zu, rank %zu, parameters counted k = %zu\n", st->n, st->rank,
           st->k);
  fputs ("    deviance          ", o);
  num (o, 14, st->deviance);
  fprintf (o, "   on %zu dof\n", st->dof_resid);
  fputs ("    null deviance     ", o);
  num (o, 14, st->deviance_null);
  fprintf (o, "   on %zu dof\n", st->dof_null);
  fputs ("    Pearson chi2      ", o);
  num (o, 14, st->pearson);
  fputs ("\n    dispersion        ", o);
  num (o, 14, st->phi_pearson);
  fputs ("   (Pearson)   ", o);
  num (o, 12, st->phi_ml);
  fputs ("   (maximum likelihood)\n", o);
  fputs ("    log-likelihood    ", o);
  num (o, 14, st->loglik);
  if (bl_fit_transform (fit)->kind != BL_TRANSFORM_NONE) {
    fputs ("   (on y's scale; transformed scale ", o);
    num (o, 0, st->loglik_transformed);
    fputc (')', o);
  }
  fputs ("\n    AIC               ", o);
  num (o, 14, st->aic);
  fputs ("   AICc ", o);
  num (o, 12, st->aicc);
  fputs ("   BIC ", o);
  num (o, 12, st->bic);
  fputc ('\n', o);
  if (!isfinite (st->loglik) && st->loglik_why[0])
    fprintf (o, "    (no likelihood figures: %s)\n", st->loglik_why);
  if (!isfinite (st->deviance_null) && st->deviance_null_why[0])
    fprintf (o, "    (no null deviance: %s)\n", st->deviance_null_why);
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

  if (info->against) {
    const bl_nested *a = info->against;
    fprintf (o, "\n  Against the smaller model (%s)\n", a->terms[0] ? a->terms : "intercept");
    fprintf (o, "    deviance %.6g there, %.6g here: ", a->deviance_small, a->deviance_big);
    if (a->dof2)
      fprintf (o, "F = %.4g on %zu and %zu dof, p %.4g\n", a->stat, a->dof, a->dof2, a->p);
    else
      fprintf (o, "chi2 = %.4g on %zu dof, p %.4g\n", a->stat, a->dof, a->p);
  }
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
