/* report_plots.c -- the plots of the HTML report (report_svg.h): residuals against fitted
   values, the spread groups, the normal quantile plot, the Box-Cox profile and the log-log
   mean-variance plot.  Each draws a series the job runner computed (job_run.h,
   bl_job_plots); the plots compute nothing but the drawing (ranges, ticks, bins). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <gsl/gsl_cdf.h>
#include "alloc.h"
#include "report_svg.h"

/* ---------------------------------------------------------------- plots */

/* The scale of a fit's fitted values, for axis labels: "repair_hours", "log repair_hours". */
static void
scale_name (const bl_fit *f, const char *resp, char *buf, size_t cap)
{
  const bl_fit_transform_info *t = bl_fit_transform (f);
  const char *sh = t->shift_given ? " + shift" : "";
  switch (t->kind) {
  case BL_TRANSFORM_LOG: snprintf (buf, cap, "log(%s%s)", resp, sh); break;
  case BL_TRANSFORM_SQRT: snprintf (buf, cap, "sqrt(%s%s)", resp, sh); break;
  case BL_TRANSFORM_BOXCOX:
    snprintf (buf, cap, "Box-Cox %.4g of %s%s", t->lambda, resp, sh);
    break;
  default: snprintf (buf, cap, "%s", resp); break;
  }
}

static size_t
fit_n (const bl_fit *f)
{
  return bl_design_n (bl_fit_design (f));
}

/* (1) Pearson residuals R (the panel's series) against fitted values: one small panel. */
void
bl_html_plot_resid (bl_hw *h, const bl_fit *f, const char *resp, const char *heading,
                    const char *what, double W, double H, const double *r)
{
  const size_t n = fit_n (f);
  const double *mu = bl_fit_mu (f);
  char sc[256], xlab[300], title[600];
  double lo, hi, rlo, rhi, m;
  bl_svg_frame fr;
  scale_name (f, resp, sc, sizeof sc);
  snprintf (xlab, sizeof xlab, "fitted value, %s", sc);
  snprintf (title, sizeof title, "Pearson residuals against fitted values: %s", what);
  bl_svg_range (mu, n, &lo, &hi);
  bl_svg_range (r, n, &rlo, &rhi);
  m = fmax (fabs (rlo), fabs (rhi));
  bl_svg_frame_init (&fr, W, H, heading != NULL);
  bl_svg_axis_set (&fr.x, lo, hi, W < 400.0 ? 4 : 6);
  bl_svg_axis_set (&fr.y, -m, m, 4);
  bl_svg_begin (h, &fr, title, heading);
  bl_svg_axes (h, &fr, xlab, "Pearson residual");
  bl_svg_scatter (h, &fr, mu, r, n);
  bl_svg_seg (h, &fr, "zero", fr.x.lo, 0.0, fr.x.hi, 0.0);
  bl_svg_end (h);
}

/* (2) The spread groups: rms Pearson residual per group by fitted value, with the null 95%
   point of the ratio drawn as a level: the smallest group's rms times that point.  A group
   above the line makes the ratio larger than 95% of ratios under constant variance. */
void
bl_html_plot_spread (bl_hw *h, const bl_fit *f, const char *resp, const char *id, double null95,
                     const bl_spread *spp)
{
  const size_t n = fit_n (f);
  const bl_spread sp = *spp;
  char sc[256], xlab[300], buf[1024];
  double lo = HUGE_VAL, hi = -HUGE_VAL, rmin = HUGE_VAL, rmax = 0.0, line;
  bl_svg_frame fr;
  bl_hw_fig_begin (h);
  if (sp.ngroups < 2) {
    bl_hw_put (h, "<p class=\"none\">no spread groups: ");
    bl_hw_esc (h, sp.why);
    bl_hw_put (h, "</p>\n");
    bl_hw_fig_caption (h, "spread groups");
    return;
  }
  for (size_t g = 0; g < sp.ngroups; g++) {
    lo = fmin (lo, sp.groups[g].fitted_mean);
    hi = fmax (hi, sp.groups[g].fitted_mean);
    rmin = fmin (rmin, sp.groups[g].rms);
    rmax = fmax (rmax, sp.groups[g].rms);
  }
  line = rmin * null95;
  scale_name (f, resp, sc, sizeof sc);
  snprintf (xlab, sizeof xlab, "mean fitted value of the group, %s", sc);
  bl_svg_frame_init (&fr, 460.0, 300.0, 0);
  bl_svg_axis_set (&fr.x, lo - 0.05 * (hi - lo), hi + 0.05 * (hi - lo), 5);
  bl_svg_axis_set (&fr.y, 0.0, 1.08 * fmax (rmax, isfinite (line) ? line : 0.0), 5);
  snprintf (buf, sizeof buf, "spread groups of %s: rms Pearson residual by fitted value", id);
  bl_svg_begin (h, &fr, buf, NULL);
  bl_svg_axes (h, &fr, xlab, "rms Pearson residual");
  if (isfinite (line)) {
    bl_svg_seg (h, &fr, "ref", fr.x.lo, line, fr.x.hi, line);
    bl_hw_putf (h, "<text class=\"note\" x=\"%.2f\" y=\"%.2f\">null 95%%</text>\n",
                bl_svg_c2 (fr.left + fr.w - 4.0), bl_svg_c2 (bl_svg_fy (&fr, line) - 4.0));
  }
  bl_hw_put (h, "<polyline class=\"curve\" points=\"");
  for (size_t g = 0; g < sp.ngroups; g++)
    bl_hw_putf (h, "%s%.2f,%.2f", g ? " " : "", bl_svg_px (&fr, sp.groups[g].fitted_mean),
                bl_svg_py (&fr, sp.groups[g].rms));
  bl_hw_put (h, "\"/>\n<g class=\"big\">");
  for (size_t g = 0; g < sp.ngroups; g++)
    bl_svg_dot (h, &fr, sp.groups[g].fitted_mean, sp.groups[g].rms, 4.0);
  bl_hw_put (h, "</g>\n");
  bl_svg_end (h);
  if (isfinite (null95))
    snprintf (buf, sizeof buf, "%s: %zu groups of about %zu rows by fitted value; spread ratio "
              "(largest / smallest rms) %.4g.  The dashed line is the smallest group's rms "
              "times %.4g, the ratio that 95%% of constant-variance fits stay below: a point "
              "above it means the variance still changes with the mean.", id, sp.ngroups,
              n / sp.ngroups, sp.ratio, null95);
  else
    snprintf (buf, sizeof buf, "%s: %zu groups of about %zu rows by fitted value; spread ratio "
              "(largest / smallest rms) %.4g; no null 95%% point.", id, sp.ngroups,
              n / sp.ngroups, sp.ratio);
  bl_hw_fig_caption (h, buf);
}

/* (3) Normal quantile plot of the quantile residuals (Dunn & Smyth 1996, J. Comput. Graph.
   Statist. 5, 236-244): sorted q_(i) against Phi^-1((i - 0.5) / n), the plotting position of
   common practice (no source), with the identity line; above BL_HTML_MAX_POINTS rows, that
   many order statistics evenly spaced in rank (i = 1 + round(k (n - 1) / (m - 1))).  Q: the
   N sorted quantile residuals, PVAL their Kolmogorov-Smirnov p (job_run.c). */
void
bl_html_plot_qq (bl_hw *h, const char *id, const double *q, size_t n, double pval)
{
  const size_t m = n < BL_HTML_MAX_POINTS ? n : BL_HTML_MAX_POINTS;
  char buf[1024];
  double lo, hi;
  bl_svg_frame fr;
  bl_hw_fig_begin (h);
  if (n < 2) {
    bl_hw_put (h, "<p class=\"none\">fewer than 2 rows</p>\n");
    bl_hw_fig_caption (h, "normal quantile plot");
    return;
  }
  {
    const double t0 = gsl_cdf_ugaussian_Pinv (0.5 / (double) n);
    lo = fmin (q[0], t0);
    hi = fmax (q[n - 1], -t0);
  }
  bl_svg_frame_init (&fr, 460.0, 300.0, 0);
  bl_svg_axis_set (&fr.x, lo, hi, 6);
  fr.y = fr.x;
  snprintf (buf, sizeof buf, "normal quantile plot of the quantile residuals of %s", id);
  bl_svg_begin (h, &fr, buf, NULL);
  bl_svg_axes (h, &fr, "theoretical normal quantile", "quantile residual");
  bl_svg_seg (h, &fr, "ref", fr.x.lo, fr.x.lo, fr.x.hi, fr.x.hi);
  bl_hw_put (h, "<g class=\"pts\">");
  for (size_t k = 0; k < m; k++) {
    const size_t i = m == n ? k : (size_t) llround ((double) k * (double) (n - 1)
                                                    / (double) (m - 1));
    const double t = gsl_cdf_ugaussian_Pinv (((double) i + 0.5) / (double) n);
    if (bl_svg_inside (&fr, t, q[i]))
      bl_svg_dot (h, &fr, t, q[i], 1.8);
  }
  bl_hw_put (h, "</g>\n");
  bl_svg_end (h);
  if (m < n)
    snprintf (buf, sizeof buf, "%s: %zu quantile residuals, shown as %zu evenly spaced order "
              "statistics, against standard normal quantiles; the dashed line is y = x.  "
              "Points on it: the fitted distribution describes y; an S-shape: tails too "
              "heavy or too light; a bend: skew.  Kolmogorov-Smirnov p = %.4g.", id, n, m,
              pval);
  else
    snprintf (buf, sizeof buf, "%s: %zu quantile residuals against standard normal "
              "quantiles; the dashed line is y = x.  Points on it: the fitted distribution "
              "describes y; an S-shape: tails too heavy or too light; a bend: skew.  "
              "Kolmogorov-Smirnov p = %.4g.", id, n, pval);
  bl_hw_fig_caption (h, buf);
}

/* (4) The Box-Cox profile log-likelihood (on y's scale, with the Jacobian) over the lambda
   grid, the level chi2_1(0.95) / 2 = 1.92 below its top and the 95% interval between its
   crossings (Box & Cox 1964, J. R. Statist. Soc. B 26, 211-252, section 4).  The curve runs
   through the grid points and three exact points of the same profile: the top at lambda-hat
   and the two interval ends, where it equals the level.  Grid points more than
   BL_HTML_PROFILE_DROP below the top are left out, so that the curve near the top is seen. */
typedef struct xy { double x, y; int grid; } xy;

static int
cmp_xy (const void *pa, const void *pb)
{
  const xy *a = pa, *b = pb;
  return (a->x > b->x) - (a->x < b->x);
}

int
bl_html_plot_profile (bl_hw *h, const bl_candidate *k, const char *resp, bl_err *err)
{
  const bl_fit_transform_info *t = bl_fit_transform (k->fit);
  const double *lam = t->profile_lambda, *ll = t->profile_loglik;
  const double half = 0.5 * gsl_cdf_chisq_Pinv (0.95, 1.0);
  double top = bl_fit_stats_get (k->fit)->loglik, thr, bottom, xlo, xhi, ylo, yhi, a, b;
  char buf[1024], lo_s[32], hi_s[32];
  int open = 0;
  size_t m = 0;
  bl_svg_frame fr;
  xy *pt = bl_mallocn (t->nprofile + 3, sizeof *pt);
  if (!pt)
    return bl_fail (err, BL_ENOMEM, "report", "out of memory");
  for (size_t i = 0; i < t->nprofile; i++)
    if (isfinite (ll[i]) && !(ll[i] <= top))
      top = ll[i];
  thr = top - half;
  bottom = top - BL_HTML_PROFILE_DROP;
  for (size_t i = 0; i < t->nprofile; i++)
    if (isfinite (lam[i]) && isfinite (ll[i]) && ll[i] >= bottom)
      pt[m++] = (xy) { lam[i], ll[i], 1 };
  if (isfinite (t->lambda) && isfinite (top))
    pt[m++] = (xy) { t->lambda, top, 0 };
  if (isfinite (t->lambda_lo))
    pt[m++] = (xy) { t->lambda_lo, thr, 0 };
  if (isfinite (t->lambda_hi))
    pt[m++] = (xy) { t->lambda_hi, thr, 0 };
  qsort (pt, m, sizeof *pt, cmp_xy);
  xlo = ylo = HUGE_VAL;
  xhi = yhi = -HUGE_VAL;
  for (size_t i = 0; i < m; i++) {
    xlo = fmin (xlo, pt[i].x);
    xhi = fmax (xhi, pt[i].x);
    ylo = fmin (ylo, pt[i].y);
    yhi = fmax (yhi, pt[i].y);
  }
  ylo = fmin (ylo, thr - half);
  bl_hw_fig_begin (h);
  bl_svg_frame_init (&fr, 460.0, 300.0, 0);
  bl_svg_axis_set (&fr.x, xlo, xhi, 6);
  bl_svg_axis_set (&fr.y, ylo, yhi + 0.08 * (yhi - ylo), 5);
  snprintf (buf, sizeof buf, "Box-Cox profile log-likelihood of %s with its 95%% interval",
            resp);
  bl_svg_begin (h, &fr, buf, NULL);
  a = isfinite (t->lambda_lo) ? t->lambda_lo : fr.x.lo;
  b = isfinite (t->lambda_hi) ? t->lambda_hi : fr.x.hi;
  bl_hw_putf (h, "<rect class=\"band\" x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\"/>\n",
              bl_svg_px (&fr, a), bl_svg_c2 (fr.top),
              bl_svg_c2 (bl_svg_fx (&fr, b) - bl_svg_fx (&fr, a)), bl_svg_c2 (fr.h));
  bl_svg_axes (h, &fr, "lambda (Box-Cox power)", "profile log-likelihood");
  bl_svg_seg (h, &fr, "ref", fr.x.lo, thr, fr.x.hi, thr);
  bl_hw_putf (h, "<text class=\"note\" x=\"%.2f\" y=\"%.2f\">top &#8722; 1.92</text>\n",
              bl_svg_c2 (fr.left + fr.w - 4.0), bl_svg_c2 (bl_svg_fy (&fr, thr) + 13.0));
  if (isfinite (t->lambda))
    bl_svg_seg (h, &fr, "zero", t->lambda, fr.y.lo, t->lambda, fr.y.hi);
  if (m > 1) {
    bl_hw_put (h, "<polyline class=\"curve\" points=\"");
    for (size_t i = 0; i < m; i++)
      bl_hw_putf (h, "%s%.2f,%.2f", i ? " " : "", bl_svg_px (&fr, pt[i].x),
                  bl_svg_py (&fr, pt[i].y));
    bl_hw_put (h, "\"/>\n");
  }
  bl_hw_put (h, "<g class=\"big\">");
  for (size_t i = 0; i < m; i++)
    if (pt[i].grid)
      bl_svg_dot (h, &fr, pt[i].x, pt[i].y, 2.5);
  bl_hw_put (h, "</g>\n");
  bl_svg_end (h);
  bl_free (pt);
  if (isfinite (t->lambda_lo))
    snprintf (lo_s, sizeof lo_s, "%.4g", t->lambda_lo);
  else {
    snprintf (lo_s, sizeof lo_s, "below %g", BL_BOXCOX_MIN);
    open = 1;
  }
  if (isfinite (t->lambda_hi))
    snprintf (hi_s, sizeof hi_s, "%.4g", t->lambda_hi);
  else {
    snprintf (hi_s, sizeof hi_s, "above %g", BL_BOXCOX_MAX);
    open = 1;
  }
  snprintf (buf, sizeof buf, "%s: the log-likelihood on %s's scale for each Box-Cox power "
            "lambda (dots: the search grid, step %g, down to %g below the top; the line also "
            "passes through the top and the interval ends).  Estimate %.4g (the vertical "
            "line); 95%% interval %s to %s%s (shaded: where the curve stays above the dashed "
            "line, 1.92 below the top).  %s", k->id, resp, BL_BOXCOX_GRID,
            BL_HTML_PROFILE_DROP, t->lambda, lo_s, hi_s, open ? ", open" : "",
            isfinite (t->lambda_practical) ? "A round power inside the interval is a "
            "defensible simpler choice." : "No multiple of 0.5 lies inside the interval.");
  bl_hw_fig_caption (h, buf);
  return BL_OK;
}

/* (5) The log-log mean-variance plot (diag.h, bl_variance_power): per group of rows by fitted
   value, log mean squared raw residual against log mean fitted value, with the least-squares
   line whose slope K estimates the power in Var y = c mu^K.  PWP: the points (job_run.c). */
void
bl_html_plot_meanvar (bl_hw *h, const char *resp, const char *id, const bl_power *pwp)
{
  const bl_power pw = *pwp;
  char buf[1024], xlab[256];
  double xlo, xhi, ylo, yhi;
  bl_svg_frame fr;
  bl_hw_fig_begin (h);
  if (!pw.done) {
    bl_hw_put (h, "<p class=\"none\">no mean-variance plot: ");
    bl_hw_esc (h, pw.why);
    bl_hw_put (h, "</p>\n");
    bl_hw_fig_caption (h, "mean and variance");
    return;
  }
  bl_svg_range (pw.log_mean, pw.groups_used, &xlo, &xhi);
  bl_svg_range (pw.log_var, pw.groups_used, &ylo, &yhi);
  ylo = fmin (ylo, fmin (pw.intercept + pw.estimate * xlo, pw.intercept + pw.estimate * xhi));
  yhi = fmax (yhi, fmax (pw.intercept + pw.estimate * xlo, pw.intercept + pw.estimate * xhi));
  bl_svg_frame_init (&fr, 460.0, 300.0, 0);
  bl_svg_axis_set (&fr.x, xlo - 0.04 * (xhi - xlo), xhi + 0.04 * (xhi - xlo), 5);
  bl_svg_axis_set (&fr.y, ylo, yhi, 5);
  snprintf (xlab, sizeof xlab, "log mean fitted %s", resp);
  snprintf (buf, sizeof buf, "log variance against log mean, %s", id);
  bl_svg_begin (h, &fr, buf, NULL);
  bl_svg_axes (h, &fr, xlab, "log variance (mean squared residual)");
  bl_svg_seg (h, &fr, "ref", xlo, pw.intercept + pw.estimate * xlo, xhi,
              pw.intercept + pw.estimate * xhi);
  bl_hw_put (h, "<g class=\"big\">");
  for (size_t g = 0; g < pw.groups_used; g++)
    bl_svg_dot (h, &fr, pw.log_mean[g], pw.log_var[g], 3.5);
  bl_hw_put (h, "</g>\n");
  bl_svg_end (h);
  snprintf (buf, sizeof buf, "%s: %zu groups of rows by fitted value%s.  Slope K = %.4g (95%% "
            "interval %.4g to %.4g) in Var y = c mu^K: about 0 for constant variance, 1 for "
            "poisson-like counts, 2 for a constant coefficient of variation (gamma), 3 for "
            "the inverse gaussian; nearest family: %s.", id, pw.groups_used,
            pw.groups_left_out ? " (groups with mean fitted value <= 0 left out)" : "",
            pw.estimate, pw.lo, pw.hi, pw.suggested ? pw.suggested : "none");
  bl_hw_fig_caption (h, buf);
}
