/* report_html.c -- the batch report: one self-contained HTML5 page with inline CSS and SVG.

   Layout (ballast's own): a title band, the caution, a summary table of the jobs (each job
   links to its section), then one <section id="job-NAME"> per job.  A comparison's section
   holds its ranked table, the advice lines and the plots: residuals against fitted values for
   every fitted candidate as small multiples, then the winner's spread groups and normal
   quantile plot, the Box-Cox profile (when ls-bc was fitted) and the log-log mean-variance
   plot (from "ls").  A single model's section holds its coefficient table and the same plots
   for that model; a failed job's section says why.  doc/report.md explains how to read them.

   The writer computes nothing: every model figure comes from the fit or the comparison, and
   every plotted series (residuals, sorted quantile residuals, spread groups, mean-variance
   points) from the job runner (job_run.h, bl_job_plots).  The SVG kit is report_svg.c, the
   plots report_plots.c; this file holds the sections and the page.  The page is well-formed
   XML apart from its doctype (void elements closed, text and
   attribute values escaped, numeric character references only), needs no script and names no
   network resource.  Text numbers are %.4g (AIC and log-likelihoods %.2f: their differences
   matter in absolute units); SVG coordinates are rounded to 2 decimals, so the same input
   gives the same bytes. */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "job.h"
#include "report_impl.h"
#include "report_svg.h"

/* ---------------------------------------------------------------- sections */

static void
section_head (bl_hw *h, const bl_batch_row *row)
{
  bl_hw_put (h, "<section class=\"job\" id=\"");
  bl_hw_id (h, row->job);
  bl_hw_put (h, "\">\n<h2>");
  bl_hw_esc (h, row->job);
  bl_hw_putf (h, " <span class=\"badge %s\">%s</span></h2>\n", row->ok ? "ok" : "failed",
              row->ok ? "done" : "failed");
}

/* Candidates: ranked first, then the unranked in table order. */
static size_t
rank_order (const bl_compare *c, size_t *order)
{
  const size_t nc = bl_compare_count (c);
  size_t m = 0;
  for (size_t pos = 1; pos <= nc; pos++)
    for (size_t i = 0; i < nc; i++)
      if (bl_compare_get (c, i)->rank_position == pos)
        order[m++] = i;
  for (size_t i = 0; i < nc && m < BL_COMPARE_MAX; i++)
    if (!bl_compare_get (c, i)->rank_position)
      order[m++] = i;
  return m;
}

static void
rank_table (bl_hw *h, const bl_compare *c, const size_t *order, size_t m)
{
  const int disc = bl_compare_integer_y (c);
  bl_hw_putf (h, "<div class=\"wide\"><table class=\"rank\">\n<thead><tr><th>#</th><th>id</th>"
              "<th>description</th><th>k</th><th>%s</th><th>&#916; AIC</th><th>weight</th>"
              "<th>cv RMSE</th><th>spread ratio</th><th>normality p</th><th>notes</th></tr>"
              "</thead>\n<tbody>\n", disc ? "AIC (discretized)" : "AIC");
  for (size_t r = 0; r < m; r++) {
    const bl_candidate *k = bl_compare_get (c, order[r]);
    const char *cls = k->rank_position == 1 ? "win"
                      : !k->rank_position ? "off"
                      : k->delta_aic <= BL_COMPARE_DELTA ? "tie" : "";
    bl_hw_putf (h, "<tr%s%s%s>", *cls ? " class=\"" : "", cls, *cls ? "\"" : "");
    if (k->rank_position)
      bl_hw_putf (h, "<td class=\"n\">%zu</td>", k->rank_position);
    else
      bl_hw_put (h, "<td class=\"n\">" BL_HTML_DASH "</td>");
    bl_hw_put (h, "<td class=\"id\">");
    bl_hw_esc (h, k->id);
    bl_hw_put (h, "</td><td>");
    bl_hw_esc (h, k->description);
    if (isfinite (k->lambda))
      bl_hw_putf (h, " (lambda %.4g)", k->lambda);
    if (isfinite (k->variance_power))
      bl_hw_putf (h, " (K %.4g)", k->variance_power);
    bl_hw_put (h, "</td>");
    if (k->converged)
      bl_hw_putf (h, "<td class=\"n\">%zu</td>", k->k);
    else
      bl_hw_put (h, "<td class=\"n\">" BL_HTML_DASH "</td>");
    bl_hw_put (h, "<td class=\"n\">");
    bl_hw_fix2 (h, disc ? k->aic_discrete : k->aic);
    bl_hw_put (h, "</td><td class=\"n\">");
    bl_hw_fix2 (h, k->delta_aic);
    bl_hw_put (h, "</td>");
    bl_hw_td_num (h, k->akaike_weight);
    bl_hw_td_num (h, k->cv_rmse);
    bl_hw_putf (h, "<td class=\"n%s\">", k->spread_flag ? " flag" : "");
    bl_hw_num (h, k->spread_ratio);
    bl_hw_put (h, "</td>");
    bl_hw_td_num (h, k->normality_p);
    bl_hw_put (h, "<td class=\"notes\">");
    for (size_t j = 0; j < k->notes.n; j++) {
      if (j)
        bl_hw_put (h, "<br/>");
      bl_hw_esc (h, k->notes.msg[j]);
    }
    bl_hw_put (h, "</td></tr>\n");
  }
  bl_hw_put (h, "</tbody></table></div>\n");
}

/* A comparison's section: the ranked table, the advice and the plots of P. */
static int
compare_section (bl_hw *h, const bl_compare *c, const char *resp, size_t n, unsigned long seed,
                 const bl_job_plots *p, bl_err *err)
{
  const bl_warnings *adv = bl_compare_advice (c);
  size_t order[BL_COMPARE_MAX], m = rank_order (c, order);
  int st = BL_OK;
  bl_hw_put (h, "<p class=\"meta\">Comparison of variance treatments for <b>");
  bl_hw_esc (h, resp);
  bl_hw_putf (h, "</b> on the same %zu rows%s; ranked by %s; cross-validation %zu folds; seed %lu "
              "(folds and simulated null points), plots drawn with seed %lu.</p>\n", n,
              bl_compare_integer_y (c) ? " (integer-valued: continuous candidates scored by the "
              "discretized likelihood)" : "", bl_compare_integer_y (c) ? "the discretized AIC"
              : "AIC on the response's scale", bl_compare_folds (c), bl_compare_seed (c), seed);
  rank_table (h, c, order, m);
  bl_hw_put (h, "<h3>Recommendation</h3>\n<ul class=\"advice\">\n");
  for (size_t j = 0; j < adv->n; j++) {
    bl_hw_put (h, "<li>");
    bl_hw_esc (h, adv->msg[j]);
    bl_hw_put (h, "</li>\n");
  }
  bl_hw_put (h, "</ul>\n");
  if (!p->npanels)
    return BL_OK;
  bl_hw_putf (h, "<h3>Residuals against fitted values</h3>\n<p class=\"note\">One panel per "
              "fitted "
        "candidate, in rank order, each on its own scales: Pearson residuals (the fit's own "
        "response scale) against fitted values.  A band of even height around 0 is what a "
        "right variance model gives; a funnel means the spread still grows with the mean; a "
        "curve means the mean is wrong.%s</p>\n<div class=\"multiples\">\n",
        n > BL_HTML_MAX_POINTS ? "  With more than 2000 rows each panel is a binned density: "
        "darker cells hold more rows." : "");
  for (size_t i = 0; i < p->npanels; i++) {
    const bl_candidate *k = p->panel[i].cand;
    char head[128], what[256];
    snprintf (head, sizeof head, "%zu. %s%s", k->rank_position, k->id,
              k->rank_position == 1 ? " (winner)" : "");
    snprintf (what, sizeof what, "%s, %s", k->id, k->description);
    if ((st = bl_hw_stopped (h, err)) != BL_OK)
      return st;
    bl_hw_fig_begin (h);
    bl_html_plot_resid (h, k->fit, resp, head, what, 300.0, 220.0, p->panel[i].pearson);
    bl_hw_put (h, "</figure>\n");
  }
  bl_hw_put (h, "</div>\n");
  if (p->main) {
    const bl_candidate *w = bl_compare_get (c, (size_t) bl_compare_winner (c));
    bl_hw_put (h, "<h3>The winner, ");
    bl_hw_esc (h, w->id);
    bl_hw_put (h, "</h3>\n<div class=\"plots\">\n");
    if ((st = bl_hw_stopped (h, err)) != BL_OK)
      return st;
    bl_html_plot_spread (h, w->fit, resp, w->id, p->null95, &p->spread);
    if ((st = bl_hw_stopped (h, err)) != BL_OK)
      return st;
    bl_html_plot_qq (h, w->id, p->qq, p->nq, p->qq_p);
    bl_hw_put (h, "</div>\n");
  }
  if (p->profile || p->power_fit) {
    bl_hw_put (h, "<h3>Choosing a transform and a variance function</h3>\n"
               "<div class=\"plots\">\n");
    if ((st = bl_hw_stopped (h, err)) != BL_OK)
      return st;
    if (p->profile && bl_fit_transform (p->profile->fit)->nprofile > 0
        && (st = bl_html_plot_profile (h, p->profile, resp, err)) != BL_OK)
      return st;
    if ((st = bl_hw_stopped (h, err)) != BL_OK)
      return st;
    if (p->power_fit)
      bl_html_plot_meanvar (h, resp, "ls (ordinary least squares)", &p->power);
    bl_hw_put (h, "</div>\n");
  }
  return BL_OK;
}

static const char *
model_name (const bl_fit *f, char *buf, size_t cap)
{
  const bl_fit_transform_info *t = bl_fit_transform (f);
  const bl_fit_variance_info *v = bl_fit_variance (f);
  if (bl_fit_method (f) == BL_METHOD_WLS)
    snprintf (buf, cap, "weighted least squares, Var y = sigma^2 %s",
              v->kind == BL_VARIANCE_NONE ? "/ weight" : v->expr);
  else if (t->kind != BL_TRANSFORM_NONE)
    snprintf (buf, cap, "ordinary least squares of %s(y)%s", t->name,
              t->kind == BL_TRANSFORM_BOXCOX ? " (Box-Cox)" : "");
  else
    snprintf (buf, cap, "%s family, %s link (%s)", bl_family_name (bl_fit_family (f)),
              bl_fit_link (f)->name, bl_fit_method (f) == BL_METHOD_OLS
              ? "ordinary least squares" : "maximum likelihood by IRLS");
  return buf;
}

static int
fit_section (bl_hw *h, const bl_fit *f, const bl_design *d, const char *resp, unsigned long seed,
             const bl_job_plots *pl, bl_err *err)
{
  const bl_fit_stats *st = bl_fit_stats_get (f);
  const size_t nrows = bl_design_n (bl_fit_design (f));
  const bl_warnings *wn = bl_fit_warnings (f);
  const double *beta = bl_fit_beta (f), *se = bl_fit_se (f), *lo = bl_fit_lo (f);
  const double *hi = bl_fit_hi (f);
  const int *al = bl_fit_aliased (f);
  const size_t p = bl_design_p (d);
  char buf[512];
  int s;
  bl_hw_put (h, "<p class=\"meta\">One model for <b>");
  bl_hw_esc (h, resp);
  bl_hw_put (h, "</b>: ");
  bl_hw_esc (h, model_name (f, buf, sizeof buf));
  bl_hw_putf (h, "; %zu rows; plots drawn with seed %lu.</p>\n", st->n, seed);
  if (!st->converged) {
    bl_hw_put (h, "<p class=\"why\">The fit failed: ");
    bl_hw_esc (h, bl_fit_status (f)->msg);
    bl_hw_put (h, "</p>\n");
    return BL_OK;
  }
  bl_hw_putf (h, "<div class=\"wide\"><table class=\"coef\">\n<thead><tr><th>term</th>"
              "<th>estimate</th><th>standard error</th><th>%.4g%% interval</th></tr></thead>\n"
              "<tbody>\n", 100.0 * st->level);
  for (size_t j = 0; j < p; j++) {
    bl_hw_put (h, "<tr><td class=\"id\">");
    bl_hw_esc (h, bl_design_label (d, j));
    bl_hw_put (h, "</td>");
    if (al && al[j]) {
      bl_hw_put (h, "<td class=\"n\" colspan=\"3\">aliased: not estimable from these rows</td>"
                 "</tr>\n");
      continue;
    }
    bl_hw_td_num (h, beta[j]);
    bl_hw_td_num (h, se[j]);
    bl_hw_put (h, "<td class=\"n\">");
    bl_hw_num (h, lo[j]);
    bl_hw_put (h, " to ");
    bl_hw_num (h, hi[j]);
    bl_hw_put (h, "</td></tr>\n");
  }
  bl_hw_put (h, "</tbody></table></div>\n<p class=\"figs\">log-likelihood ");
  bl_hw_fix2 (h, st->loglik);
  bl_hw_put (h, "; AIC ");
  bl_hw_fix2 (h, st->aic);
  bl_hw_put (h, "; BIC ");
  bl_hw_fix2 (h, st->bic);
  bl_hw_putf (h, "; parameters k = %zu; dispersion ", st->k);
  bl_hw_num (h, st->phi_used);
  bl_hw_putf (h, "; standard errors: %s.</p>\n", st->se_kind ? st->se_kind : "model");
  if (wn && wn->n) {
    bl_hw_put (h, "<ul class=\"advice\">\n");
    for (size_t j = 0; j < wn->n; j++) {
      bl_hw_put (h, "<li>");
      bl_hw_esc (h, wn->msg[j]);
      bl_hw_put (h, "</li>\n");
    }
    bl_hw_put (h, "</ul>\n");
  }
  bl_hw_put (h, "<h3>Plots</h3>\n<div class=\"plots\">\n");
  if ((s = bl_hw_stopped (h, err)) != BL_OK)
    return s;
  bl_hw_fig_begin (h);
  bl_html_plot_resid (h, f, resp, NULL, "the model", 460.0, 300.0, pl->panel[0].pearson);
  snprintf (buf, sizeof buf, "Pearson residuals against fitted values%s: an even band around "
            "0 means the variance model fits; a funnel, that the spread still changes with "
            "the mean.", nrows > BL_HTML_MAX_POINTS ? " (a binned density above 2000 rows: "
            "darker cells hold more rows)" : "");
  bl_hw_fig_caption (h, buf);
  /* the spread ratio's null point for these group sizes (diag.h), from the seeded RNG of
     the plot series (job_run.c) */
  if ((s = bl_hw_stopped (h, err)) != BL_OK)
    return s;
  bl_html_plot_spread (h, f, resp, "the model", pl->null95, &pl->spread);
  if ((s = bl_hw_stopped (h, err)) != BL_OK)
    return s;
  bl_html_plot_qq (h, "the model", pl->qq, pl->nq, pl->qq_p);
  if ((s = bl_hw_stopped (h, err)) != BL_OK)
    return s;
  bl_html_plot_meanvar (h, resp, "the model", &pl->power);
  bl_hw_put (h, "</div>\n");
  return BL_OK;
}

int
bl_report_section_html (FILE *out, const bl_batch_row *row, const bl_compare *c,
                        const bl_fit *fit, const bl_design *d, unsigned long seed,
                        const bl_job_plots *plots, volatile sig_atomic_t *cancel, bl_err *err)
{
  bl_hw h = { out, 0, cancel };
  const char *resp;
  int st = BL_OK;
  if (!row)
    return bl_fail (err, BL_EINTERNAL, "report", "no summary row given");
  if (c && fit)
    return bl_fail (err, BL_EINTERNAL, "report", "job '%s': both a comparison and a single "
                    "model given", row->job);
  if (!d && fit)
    d = bl_fit_design (fit);
  if (!d && (c || fit))
    return bl_fail (err, BL_EINTERNAL, "report", "job '%s': no design given", row->job);
  if ((c || (fit && bl_fit_stats_get (fit)->converged)) && !plots)
    return bl_fail (err, BL_EINTERNAL, "report", "job '%s': no plot series given", row->job);
  section_head (&h, row);
  if (!c && !fit) {
    bl_hw_put (&h, "<p class=\"why\">");
    bl_hw_esc (&h, row->ok ? "nothing was fitted" : row->message);
    bl_hw_put (&h, "</p>\n</section>\n");
    return bl_hw_finish (&h, err);
  }
  resp = bl_design_response (d);
  if (c)
    st = compare_section (&h, c, resp, bl_design_n (d), seed, plots, err);
  else
    st = fit_section (&h, fit, d, resp, seed, plots, err);
  if (st == BL_OK && row->message[0] && row->ok) {
    bl_hw_put (&h, "<p class=\"note\">");
    bl_hw_esc (&h, row->message);
    bl_hw_put (&h, "</p>\n");
  }
  bl_hw_put (&h, "</section>\n");
  return st == BL_OK ? bl_hw_finish (&h, err) : st;
}

/* ---------------------------------------------------------------- the page */

/* No '<', '>' or '&' in the style sheet: the page stays well-formed XML. */
static const char page_css[] =
  "body{margin:0;font:14px/1.45 system-ui,'Segoe UI',Helvetica,Arial,sans-serif;"
  "color:#1d2430;background:#f3f4f1}\n"
  "header.top{background:#1f3a4d;color:#f3f4f1;padding:18px 32px 14px}\n"
  "header.top h1{margin:0;font-size:23px;font-weight:600}\n"
  "header.top p{margin:4px 0 0;color:#c6d3dc}\n"
  "main{max-width:1380px;margin:0 auto;padding:6px 32px 36px}\n"
  ".caution{border-left:6px solid #c98a1b;background:#fff6e3;padding:10px 16px;margin:18px 0;"
  "font-size:15px}\n"
  "h2{font-size:19px;margin:18px 0 8px}\n"
  "h3{font-size:15px;margin:20px 0 6px;color:#1f3a4d}\n"
  "table{border-collapse:collapse;background:#fff;font-variant-numeric:tabular-nums}\n"
  "th,td{padding:4px 9px;border-bottom:1px solid #dfe3e6;text-align:left;vertical-align:top}\n"
  "th{background:#e6ebee;font-weight:600;font-size:12.5px;white-space:nowrap}\n"
  "td.n{text-align:right;white-space:nowrap}\n"
  "td.id{font-family:ui-monospace,Menlo,Consolas,monospace;white-space:nowrap}\n"
  "td.notes{font-size:12px;color:#4a535c;max-width:360px}\n"
  "tr.win td{background:#e4f1e4;font-weight:600}\n"
  "tr.tie td{background:#f2f7ee}\n"
  "tr.off td{color:#80878e}\n"
  "td.flag{color:#a3321c;font-weight:600}\n"
  ".wide{overflow-x:auto}\n"
  "section.job{background:#fff;border:1px solid #d6dadd;border-radius:6px;"
  "padding:4px 22px 18px;margin:26px 0}\n"
  ".badge{font-size:12px;font-weight:600;padding:2px 8px;border-radius:9px;"
  "vertical-align:middle}\n"
  ".badge.ok{background:#d9eedb;color:#245c2c}\n"
  ".badge.failed{background:#f6dcd6;color:#8c2a17}\n"
  ".status-failed{color:#8c2a17;font-weight:600}\n"
  ".meta,.note,.figs{color:#3c454e}\n"
  ".why{color:#8c2a17;font-weight:600}\n"
  "ul.advice{margin:4px 0 8px;padding-left:20px}\n"
  ".multiples{display:grid;grid-template-columns:repeat(auto-fill,300px);gap:8px 14px}\n"
  ".plots{display:flex;flex-wrap:wrap;gap:14px 26px}\n"
  "figure{margin:0}\n"
  ".plots figure{width:460px}\n"
  "figcaption{font-size:12px;color:#4a535c;margin-top:2px}\n"
  "p.none{color:#80878e;font-style:italic}\n"
  "svg.plot{display:block;background:#fff}\n"
  "svg text{font-size:10.5px;fill:#434c55}\n"
  "svg .tx text,svg .lab{text-anchor:middle}\n"
  "svg .ty text{text-anchor:end}\n"
  "svg .lab{font-size:11.5px;fill:#1d2430}\n"
  "svg .head{font-size:12px;font-weight:600;fill:#1f3a4d}\n"
  "svg .note{text-anchor:end;fill:#a8321f}\n"
  "svg .frame{fill:none;stroke:#9aa2a9}\n"
  "svg .grid line{stroke:#edf0f2}\n"
  "svg .zero{stroke:#6d757c;stroke-dasharray:3 3}\n"
  "svg .pts circle{fill:#1f6f8b;fill-opacity:.5}\n"
  "svg .dens rect{fill:#1f3a4d}\n"
  "svg .ref{stroke:#c0392b;stroke-width:1.3;stroke-dasharray:6 4;fill:none}\n"
  "svg .curve{stroke:#1f6f8b;stroke-width:1.6;fill:none}\n"
  "svg .band{fill:#c98a1b;fill-opacity:.16}\n"
  "svg .big circle{fill:#1f6f8b}\n"
  "footer{color:#6b737a;font-size:12px;padding:0 32px 24px;max-width:1380px;margin:0 auto}\n";

int
bl_report_html_page (FILE *out, const char *title, const bl_batch_row *rows,
                     const char *const *sections, size_t njobs, bl_err *err)
{
  bl_hw h = { out, 0, NULL };
  size_t ndone = 0;
  if (njobs && !rows)
    return bl_fail (err, BL_EINTERNAL, "report", "no summary rows given");
  for (size_t i = 0; i < njobs; i++)
    ndone += rows[i].ok != 0;
  bl_hw_put (&h, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n"
             "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n<title>");
  bl_hw_esc (&h, title);
  bl_hw_putf (&h, "</title>\n<style>\n%s</style>\n</head>\n<body>\n<header class=\"top\"><h1>",
              page_css);
  bl_hw_esc (&h, title);
  bl_hw_putf (&h, "</h1>\n<p>%zu job%s: %zu done, %zu failed</p></header>\n<main>\n", njobs,
              njobs == 1 ? "" : "s", ndone, njobs - ndone);
  bl_hw_put (&h, "<p class=\"caution\"><b>Caution.</b> A ranking is evidence, not proof: validate "
             "the chosen model on new data before acting on it.</p>\n");
  bl_hw_put (&h, "<h2 id=\"summary\">Jobs</h2>\n<div class=\"wide\"><table class=\"summary\">\n"
             "<thead><tr><th>job</th><th>status</th><th>method</th><th>winner</th><th>AIC</th>"
             "<th>&#916; to runner-up</th><th>spread ratio</th><th>n</th><th>message</th></tr>"
             "</thead>\n<tbody>\n");
  for (size_t i = 0; i < njobs; i++) {
    const bl_batch_row *w = &rows[i];
    bl_hw_put (&h, "<tr><td class=\"id\"><a href=\"#");
    bl_hw_id (&h, w->job);
    bl_hw_put (&h, "\">");
    bl_hw_esc (&h, w->job);
    bl_hw_putf (&h, "</a></td><td class=\"status-%s\">%s</td><td>", w->ok ? "ok" : "failed",
                w->ok ? "done" : "failed");
    bl_hw_esc (&h, w->method);
    bl_hw_put (&h, "</td><td class=\"id\">");
    bl_hw_esc (&h, w->winner);
    bl_hw_put (&h, "</td><td class=\"n\">");
    bl_hw_fix2 (&h, w->ok ? w->aic : NAN);
    bl_hw_put (&h, "</td><td class=\"n\">");
    bl_hw_fix2 (&h, w->ok ? w->delta : NAN);
    bl_hw_put (&h, "</td>");
    bl_hw_td_num (&h, w->ok ? w->spread_ratio : NAN);
    if (w->ok)
      bl_hw_putf (&h, "<td class=\"n\">%zu</td>", w->n);
    else
      bl_hw_put (&h, "<td class=\"n\">" BL_HTML_DASH "</td>");
    bl_hw_put (&h, "<td>");
    bl_hw_esc (&h, w->message);
    bl_hw_put (&h, "</td></tr>\n");
  }
  bl_hw_put (&h, "</tbody></table></div>\n");
  for (size_t i = 0; i < njobs; i++) {
    if (sections && sections[i]) {
      bl_hw_put (&h, sections[i]);
    } else {           /* no section written: the row's reason stands in */
      section_head (&h, &rows[i]);
      bl_hw_put (&h, "<p class=\"why\">");
      bl_hw_esc (&h, rows[i].message[0] ? rows[i].message : "no report was written for this job");
      bl_hw_put (&h, "</p>\n</section>\n");
    }
  }
  bl_hw_put (&h, "</main>\n<footer>Written by ballast.  The page is self-contained: no "
             "scripts, no "
       "network resources; plots are inline SVG.</footer>\n</body>\n</html>\n");
  return bl_hw_finish (&h, err);
}
