/* report_html.c -- the batch report: one self-contained HTML5 page with inline CSS and SVG.

   Layout (ballast's own): a title band, the caution, a summary table of the jobs (each job
   links to its section), then one <section id="job-NAME"> per job.  A comparison's section
   holds its ranked table, the advice lines and the plots: residuals against fitted values for
   every fitted candidate as small multiples, then the winner's spread groups and normal
   quantile plot, the Box-Cox profile (when ls-bc was fitted) and the log-log mean-variance
   plot (from "ls").  A single model's section holds its coefficient table and the same plots
   for that model; a failed job's section says why.  doc/report.md explains how to read them.

   The writer computes only what a plot needs to be drawn (residuals, sorted quantiles, bins,
   group summaries through diag.h); every model figure comes from the fit or the comparison.
   The page is well-formed XML apart from its doctype (void elements closed, text and
   attribute values escaped, numeric character references only), needs no script and names no
   network resource.  Text numbers are %.4g (AIC and log-likelihoods %.2f: their differences
   matter in absolute units); SVG coordinates are rounded to 2 decimals, so the same input
   gives the same bytes. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include "alloc.h"
#include "batch.h"
#include "diag.h"
#include "job_run.h"

/* Above this many rows a residual panel is a binned density (a grid of shaded cells) and the
   normal quantile plot shows this many evenly spaced order statistics. */
#define BL_HTML_MAX_POINTS 2000
#define BL_HTML_BINS_X 30          /* density grid of a residual panel */
#define BL_HTML_BINS_Y 18
#define BL_HTML_PROFILE_DROP 40.0  /* the Box-Cox profile is shown down to this below its top */

/* ---------------------------------------------------------------- output */

/* bad: a write failed; cancel: the caller's flag (may be NULL), polled between plots */
typedef struct hw { FILE *o; int bad; volatile sig_atomic_t *cancel; } hw;

/* BL_ECANCEL (with ERR filled) once the caller's cancel flag is set, else BL_OK.  A plot
   over a million rows sorts and bins them in a fraction of a second, so polling between
   plots keeps a SIGINT's delay under one. */
static int
stopped (const hw *h, bl_err *err)
{
  if (h->cancel && *h->cancel)
    return bl_fail (err, BL_ECANCEL, "report", "the report was cancelled");
  return BL_OK;
}

static void
put (hw *h, const char *s)
{
  if (fputs (s, h->o) == EOF)
    h->bad = 1;
}

static void putf (hw *h, const char *fmt, ...)
#if defined(__GNUC__)
  __attribute__ ((format (printf, 2, 3)))
#endif
  ;

static void
putf (hw *h, const char *fmt, ...)
{
  va_list ap;
  va_start (ap, fmt);
  if (vfprintf (h->o, fmt, ap) < 0)
    h->bad = 1;
  va_end (ap);
}

/* Text and attribute values: the five XML specials as references; other control characters
   (not allowed in XML) as '?'. */
static void
esc (hw *h, const char *s)
{
  if (!s)
    return;
  for (; *s; s++) {
    const unsigned char ch = (unsigned char) *s;
    switch (ch) {
    case '&': put (h, "&amp;"); break;
    case '<': put (h, "&lt;"); break;
    case '>': put (h, "&gt;"); break;
    case '"': put (h, "&quot;"); break;
    case '\'': put (h, "&#39;"); break;
    default:
      if (fputc (ch < 0x20 && ch != '\n' && ch != '\t' ? '?' : ch, h->o) == EOF)
        h->bad = 1;
    }
  }
}

/* An element id from a job name: letters, digits, '-', '_' and '.' kept, anything else '_'
   (valid spec names are kept whole, so ids stay unique). */
static void
put_id (hw *h, const char *name)
{
  put (h, "job-");
  for (; *name; name++) {
    const char ch = *name;
    const int ok = (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z')
                   || (ch >= '0' && ch <= '9') || ch == '-' || ch == '_' || ch == '.';
    if (fputc (ok ? ch : '_', h->o) == EOF)
      h->bad = 1;
  }
}

#define DASH "&#8211;"             /* a figure that does not exist */

static void
num (hw *h, double v)
{
  if (isfinite (v))
    putf (h, "%.4g", v == 0.0 ? 0.0 : v);
  else
    put (h, DASH);
}

static void
fix2 (hw *h, double v)
{
  if (isfinite (v))
    putf (h, "%.2f", fabs (v) < 0.005 ? 0.0 : v);
  else
    put (h, DASH);
}

/* A right-aligned number cell. */
static void
td_num (hw *h, double v)
{
  put (h, "<td class=\"n\">");
  num (h, v);
  put (h, "</td>");
}

/* An SVG coordinate: 2 decimals, never "-0.00". */
static double
c2 (double v)
{
  v = round (v * 100.0) / 100.0;
  return v == 0.0 ? 0.0 : v;
}

/* ---------------------------------------------------------------- axes and frames */

typedef struct axis { double lo, hi, step; } axis;

/* Tick steps of 1, 2 or 5 times a power of ten, about NTICKS of them over SPAN (common
   practice, no source). */
static double
nice_step (double span, int nticks)
{
  const double raw = span / nticks;
  const double mag = pow (10.0, floor (log10 (raw)));
  const double f = raw / mag;
  return (f < 1.5 ? 1.0 : f < 3.5 ? 2.0 : f < 7.5 ? 5.0 : 10.0) * mag;
}

/* The axis over [LO, HI], widened to whole tick steps; a degenerate range is opened up. */
static void
axis_set (axis *a, double lo, double hi, int nticks)
{
  if (!isfinite (lo) || !isfinite (hi)) {
    lo = 0.0;
    hi = 1.0;
  }
  if (hi < lo) {
    const double t = lo;
    lo = hi;
    hi = t;
  }
  if (hi - lo <= 1e-12 * fmax (1.0, fmax (fabs (lo), fabs (hi)))) {
    const double pad = lo != 0.0 ? 0.5 * fabs (lo) : 0.5;
    lo -= pad;
    hi += pad;
  }
  a->step = nice_step (hi - lo, nticks);
  a->lo = floor (lo / a->step + 1e-9) * a->step;
  a->hi = ceil (hi / a->step - 1e-9) * a->step;
}

/* A plot: the SVG's size and the plotting area inside it. */
typedef struct frame {
  double W, H, left, top, w, h;
  axis x, y;
} frame;

static void
frame_init (frame *f, double W, double H, int heading)
{
  f->W = W;
  f->H = H;
  f->left = 62.0;
  f->top = heading ? 26.0 : 12.0;
  f->w = W - f->left - 14.0;
  f->h = H - f->top - 44.0;
}

static double
fx (const frame *f, double v)
{
  return f->left + (v - f->x.lo) / (f->x.hi - f->x.lo) * f->w;
}

static double
fy (const frame *f, double v)
{
  return f->top + f->h - (v - f->y.lo) / (f->y.hi - f->y.lo) * f->h;
}

/* Inside the frame, with a little slack for axis ends computed as k * step. */
static int
inside (const frame *f, double x, double y)
{
  const double ex = 1e-9 * (f->x.hi - f->x.lo), ey = 1e-9 * (f->y.hi - f->y.lo);
  return x >= f->x.lo - ex && x <= f->x.hi + ex && y >= f->y.lo - ey && y <= f->y.hi + ey;
}

/* The tick values of A, from a whole multiple of the step; K-th one into *V. */
static size_t
ticks (const axis *a, double *v, size_t cap)
{
  const long k0 = lround (a->lo / a->step);
  size_t m = 0;
  for (long k = k0; m < cap; k++) {
    const double t = (double) k * a->step;
    if (t > a->hi + 1e-9 * a->step)
      break;
    v[m++] = fabs (t) < 1e-9 * a->step ? 0.0 : t;
  }
  return m;
}

static void
svg_begin (hw *h, const frame *f, const char *title, const char *heading)
{
  putf (h, "<svg class=\"plot\" width=\"%.0f\" height=\"%.0f\" viewBox=\"0 0 %.0f %.0f\" "
        "role=\"img\"><title>", f->W, f->H, f->W, f->H);
  esc (h, title);
  put (h, "</title>\n");
  if (heading) {
    putf (h, "<text class=\"head\" x=\"%.2f\" y=\"16\">", c2 (f->left));
    esc (h, heading);
    put (h, "</text>\n");
  }
}

static void
svg_end (hw *h)
{
  put (h, "</svg>\n");
}

/* Grid lines, the frame, tick labels and the two axis labels. */
static void
axes (hw *h, const frame *f, const char *xlab, const char *ylab)
{
  double tx[64], ty[64];
  const size_t nx = ticks (&f->x, tx, 64), ny = ticks (&f->y, ty, 64);
  put (h, "<g class=\"grid\">");
  for (size_t i = 0; i < nx; i++)
    putf (h, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>", c2 (fx (f, tx[i])),
          c2 (f->top), c2 (fx (f, tx[i])), c2 (f->top + f->h));
  for (size_t i = 0; i < ny; i++)
    putf (h, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>", c2 (f->left),
          c2 (fy (f, ty[i])), c2 (f->left + f->w), c2 (fy (f, ty[i])));
  put (h, "</g>\n");
  putf (h, "<rect class=\"frame\" x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\"/>\n",
        c2 (f->left), c2 (f->top), c2 (f->w), c2 (f->h));
  put (h, "<g class=\"tx\">");
  for (size_t i = 0; i < nx; i++)
    putf (h, "<text x=\"%.2f\" y=\"%.2f\">%.6g</text>", c2 (fx (f, tx[i])),
          c2 (f->top + f->h + 14.0), tx[i]);
  put (h, "</g>\n<g class=\"ty\">");
  for (size_t i = 0; i < ny; i++)
    putf (h, "<text x=\"%.2f\" y=\"%.2f\">%.6g</text>", c2 (f->left - 5.0),
          c2 (fy (f, ty[i]) + 4.0), ty[i]);
  put (h, "</g>\n");
  putf (h, "<text class=\"lab\" x=\"%.2f\" y=\"%.2f\">", c2 (f->left + f->w / 2.0),
        c2 (f->H - 8.0));
  esc (h, xlab);
  putf (h, "</text>\n<text class=\"lab\" transform=\"translate(13,%.2f) rotate(-90)\">",
        c2 (f->top + f->h / 2.0));
  esc (h, ylab);
  put (h, "</text>\n");
}

/* A line in data coordinates, clipped by the caller's choice of ends; CLS a CSS class. */
static void
seg (hw *h, const frame *f, const char *cls, double x1, double y1, double x2, double y2)
{
  putf (h, "<line class=\"%s\" x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>\n", cls,
        c2 (fx (f, x1)), c2 (fy (f, y1)), c2 (fx (f, x2)), c2 (fy (f, y2)));
}

static void
dot (hw *h, const frame *f, double x, double y, double r)
{
  putf (h, "<circle cx=\"%.2f\" cy=\"%.2f\" r=\"%.1f\"/>", c2 (fx (f, x)), c2 (fy (f, y)), r);
}

/* Rows as points, or above BL_HTML_MAX_POINTS as a binned density: a BINS_X x BINS_Y grid
   over the frame, each non-empty cell shaded by sqrt(count / largest count), so that sparse
   cells stay visible. */
static void
scatter (hw *h, const frame *f, const double *x, const double *y, size_t n)
{
  if (n <= BL_HTML_MAX_POINTS) {
    put (h, "<g class=\"pts\">");
    for (size_t i = 0; i < n; i++)
      if (inside (f, x[i], y[i]))
        dot (h, f, x[i], y[i], 1.8);
    put (h, "</g>\n");
    return;
  }
  {
    unsigned long cnt[BL_HTML_BINS_Y][BL_HTML_BINS_X], top = 0;
    const double cw = f->w / BL_HTML_BINS_X, ch = f->h / BL_HTML_BINS_Y;
    memset (cnt, 0, sizeof cnt);
    for (size_t i = 0; i < n; i++) {
      long bx, by;
      if (!inside (f, x[i], y[i]))
        continue;
      bx = (long) floor ((x[i] - f->x.lo) / (f->x.hi - f->x.lo) * BL_HTML_BINS_X);
      by = (long) floor ((y[i] - f->y.lo) / (f->y.hi - f->y.lo) * BL_HTML_BINS_Y);
      bx = bx < 0 ? 0 : bx >= BL_HTML_BINS_X ? BL_HTML_BINS_X - 1 : bx;
      by = by < 0 ? 0 : by >= BL_HTML_BINS_Y ? BL_HTML_BINS_Y - 1 : by;
      cnt[by][bx]++;
      if (cnt[by][bx] > top)
        top = cnt[by][bx];
    }
    put (h, "<g class=\"dens\">");
    for (int by = 0; by < BL_HTML_BINS_Y; by++)
      for (int bx = 0; bx < BL_HTML_BINS_X; bx++)
        if (cnt[by][bx])
          putf (h, "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" "
                "fill-opacity=\"%.2f\"><title>%lu</title></rect>",
                c2 (f->left + bx * cw), c2 (f->top + f->h - (by + 1) * ch), c2 (cw), c2 (ch),
                0.08 + 0.92 * sqrt ((double) cnt[by][bx] / (double) top), cnt[by][bx]);
    put (h, "</g>\n");
  }
}

static void
fig_begin (hw *h)
{
  put (h, "<figure>\n");
}

static void
fig_caption (hw *h, const char *text)
{
  put (h, "<figcaption>");
  esc (h, text);
  put (h, "</figcaption>\n</figure>\n");
}

static void
range_of (const double *v, size_t n, double *lo, double *hi)
{
  *lo = HUGE_VAL;
  *hi = -HUGE_VAL;
  for (size_t i = 0; i < n; i++)
    if (isfinite (v[i])) {
      *lo = v[i] < *lo ? v[i] : *lo;
      *hi = v[i] > *hi ? v[i] : *hi;
    }
}

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
static void
plot_resid (hw *h, const bl_fit *f, const char *resp, const char *heading, const char *what,
            double W, double H, const double *r)
{
  const size_t n = fit_n (f);
  const double *mu = bl_fit_mu (f);
  char sc[256], xlab[300], title[600];
  double lo, hi, rlo, rhi, m;
  frame fr;
  scale_name (f, resp, sc, sizeof sc);
  snprintf (xlab, sizeof xlab, "fitted value, %s", sc);
  snprintf (title, sizeof title, "Pearson residuals against fitted values: %s", what);
  range_of (mu, n, &lo, &hi);
  range_of (r, n, &rlo, &rhi);
  m = fmax (fabs (rlo), fabs (rhi));
  frame_init (&fr, W, H, heading != NULL);
  axis_set (&fr.x, lo, hi, W < 400.0 ? 4 : 6);
  axis_set (&fr.y, -m, m, 4);
  svg_begin (h, &fr, title, heading);
  axes (h, &fr, xlab, "Pearson residual");
  scatter (h, &fr, mu, r, n);
  seg (h, &fr, "zero", fr.x.lo, 0.0, fr.x.hi, 0.0);
  svg_end (h);
}

/* (2) The spread groups: rms Pearson residual per group by fitted value, with the null 95%
   point of the ratio drawn as a level: the smallest group's rms times that point.  A group
   above the line makes the ratio larger than 95% of ratios under constant variance. */
static void
plot_spread (hw *h, const bl_fit *f, const char *resp, const char *id, double null95,
             const bl_spread *spp)
{
  const size_t n = fit_n (f);
  const bl_spread sp = *spp;
  char sc[256], xlab[300], buf[1024];
  double lo = HUGE_VAL, hi = -HUGE_VAL, rmin = HUGE_VAL, rmax = 0.0, line;
  frame fr;
  fig_begin (h);
  if (sp.ngroups < 2) {
    put (h, "<p class=\"none\">no spread groups: ");
    esc (h, sp.why);
    put (h, "</p>\n");
    fig_caption (h, "spread groups");
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
  frame_init (&fr, 460.0, 300.0, 0);
  axis_set (&fr.x, lo - 0.05 * (hi - lo), hi + 0.05 * (hi - lo), 5);
  axis_set (&fr.y, 0.0, 1.08 * fmax (rmax, isfinite (line) ? line : 0.0), 5);
  snprintf (buf, sizeof buf, "spread groups of %s: rms Pearson residual by fitted value", id);
  svg_begin (h, &fr, buf, NULL);
  axes (h, &fr, xlab, "rms Pearson residual");
  if (isfinite (line)) {
    seg (h, &fr, "ref", fr.x.lo, line, fr.x.hi, line);
    putf (h, "<text class=\"note\" x=\"%.2f\" y=\"%.2f\">null 95%%</text>\n",
          c2 (fr.left + fr.w - 4.0), c2 (fy (&fr, line) - 4.0));
  }
  put (h, "<polyline class=\"curve\" points=\"");
  for (size_t g = 0; g < sp.ngroups; g++)
    putf (h, "%s%.2f,%.2f", g ? " " : "", c2 (fx (&fr, sp.groups[g].fitted_mean)),
          c2 (fy (&fr, sp.groups[g].rms)));
  put (h, "\"/>\n<g class=\"big\">");
  for (size_t g = 0; g < sp.ngroups; g++)
    dot (h, &fr, sp.groups[g].fitted_mean, sp.groups[g].rms, 4.0);
  put (h, "</g>\n");
  svg_end (h);
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
  fig_caption (h, buf);
}

/* (3) Normal quantile plot of the quantile residuals (Dunn & Smyth 1996, J. Comput. Graph.
   Statist. 5, 236-244): sorted q_(i) against Phi^-1((i - 0.5) / n), the plotting position of
   common practice (no source), with the identity line; above BL_HTML_MAX_POINTS rows, that
   many order statistics evenly spaced in rank (i = 1 + round(k (n - 1) / (m - 1))).  Q: the
   N sorted quantile residuals, PVAL their Kolmogorov-Smirnov p (job_run.c). */
static void
plot_qq (hw *h, const char *id, const double *q, size_t n, double pval)
{
  const size_t m = n < BL_HTML_MAX_POINTS ? n : BL_HTML_MAX_POINTS;
  char buf[1024];
  double lo, hi;
  frame fr;
  fig_begin (h);
  if (n < 2) {
    put (h, "<p class=\"none\">fewer than 2 rows</p>\n");
    fig_caption (h, "normal quantile plot");
    return;
  }
  {
    const double t0 = gsl_cdf_ugaussian_Pinv (0.5 / (double) n);
    lo = fmin (q[0], t0);
    hi = fmax (q[n - 1], -t0);
  }
  frame_init (&fr, 460.0, 300.0, 0);
  axis_set (&fr.x, lo, hi, 6);
  fr.y = fr.x;
  snprintf (buf, sizeof buf, "normal quantile plot of the quantile residuals of %s", id);
  svg_begin (h, &fr, buf, NULL);
  axes (h, &fr, "theoretical normal quantile", "quantile residual");
  seg (h, &fr, "ref", fr.x.lo, fr.x.lo, fr.x.hi, fr.x.hi);
  put (h, "<g class=\"pts\">");
  for (size_t k = 0; k < m; k++) {
    const size_t i = m == n ? k : (size_t) llround ((double) k * (double) (n - 1)
                                                    / (double) (m - 1));
    const double t = gsl_cdf_ugaussian_Pinv (((double) i + 0.5) / (double) n);
    if (inside (&fr, t, q[i]))
      dot (h, &fr, t, q[i], 1.8);
  }
  put (h, "</g>\n");
  svg_end (h);
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
  fig_caption (h, buf);
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

static int
plot_profile (hw *h, const bl_candidate *k, const char *resp, bl_err *err)
{
  const bl_fit_transform_info *t = bl_fit_transform (k->fit);
  const double *lam = t->profile_lambda, *ll = t->profile_loglik;
  const double half = 0.5 * gsl_cdf_chisq_Pinv (0.95, 1.0);
  double top = bl_fit_stats_get (k->fit)->loglik, thr, bottom, xlo, xhi, ylo, yhi, a, b;
  char buf[1024], lo_s[32], hi_s[32];
  int open = 0;
  size_t m = 0;
  frame fr;
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
  fig_begin (h);
  frame_init (&fr, 460.0, 300.0, 0);
  axis_set (&fr.x, xlo, xhi, 6);
  axis_set (&fr.y, ylo, yhi + 0.08 * (yhi - ylo), 5);
  snprintf (buf, sizeof buf, "Box-Cox profile log-likelihood of %s with its 95%% interval",
            resp);
  svg_begin (h, &fr, buf, NULL);
  a = isfinite (t->lambda_lo) ? t->lambda_lo : fr.x.lo;
  b = isfinite (t->lambda_hi) ? t->lambda_hi : fr.x.hi;
  putf (h, "<rect class=\"band\" x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\"/>\n",
        c2 (fx (&fr, a)), c2 (fr.top), c2 (fx (&fr, b) - fx (&fr, a)), c2 (fr.h));
  axes (h, &fr, "lambda (Box-Cox power)", "profile log-likelihood");
  seg (h, &fr, "ref", fr.x.lo, thr, fr.x.hi, thr);
  putf (h, "<text class=\"note\" x=\"%.2f\" y=\"%.2f\">top &#8722; 1.92</text>\n",
        c2 (fr.left + fr.w - 4.0), c2 (fy (&fr, thr) + 13.0));
  if (isfinite (t->lambda))
    seg (h, &fr, "zero", t->lambda, fr.y.lo, t->lambda, fr.y.hi);
  if (m > 1) {
    put (h, "<polyline class=\"curve\" points=\"");
    for (size_t i = 0; i < m; i++)
      putf (h, "%s%.2f,%.2f", i ? " " : "", c2 (fx (&fr, pt[i].x)), c2 (fy (&fr, pt[i].y)));
    put (h, "\"/>\n");
  }
  put (h, "<g class=\"big\">");
  for (size_t i = 0; i < m; i++)
    if (pt[i].grid)
      dot (h, &fr, pt[i].x, pt[i].y, 2.5);
  put (h, "</g>\n");
  svg_end (h);
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
  fig_caption (h, buf);
  return BL_OK;
}

/* (5) The log-log mean-variance plot (diag.h, bl_variance_power): per group of rows by fitted
   value, log mean squared raw residual against log mean fitted value, with the least-squares
   line whose slope K estimates the power in Var y = c mu^K.  PWP: the points (job_run.c). */
static void
plot_meanvar (hw *h, const char *resp, const char *id, const bl_power *pwp)
{
  const bl_power pw = *pwp;
  char buf[1024], xlab[256];
  double xlo, xhi, ylo, yhi;
  frame fr;
  fig_begin (h);
  if (!pw.done) {
    put (h, "<p class=\"none\">no mean-variance plot: ");
    esc (h, pw.why);
    put (h, "</p>\n");
    fig_caption (h, "mean and variance");
    return;
  }
  range_of (pw.log_mean, pw.groups_used, &xlo, &xhi);
  range_of (pw.log_var, pw.groups_used, &ylo, &yhi);
  ylo = fmin (ylo, fmin (pw.intercept + pw.estimate * xlo, pw.intercept + pw.estimate * xhi));
  yhi = fmax (yhi, fmax (pw.intercept + pw.estimate * xlo, pw.intercept + pw.estimate * xhi));
  frame_init (&fr, 460.0, 300.0, 0);
  axis_set (&fr.x, xlo - 0.04 * (xhi - xlo), xhi + 0.04 * (xhi - xlo), 5);
  axis_set (&fr.y, ylo, yhi, 5);
  snprintf (xlab, sizeof xlab, "log mean fitted %s", resp);
  snprintf (buf, sizeof buf, "log variance against log mean, %s", id);
  svg_begin (h, &fr, buf, NULL);
  axes (h, &fr, xlab, "log variance (mean squared residual)");
  seg (h, &fr, "ref", xlo, pw.intercept + pw.estimate * xlo, xhi,
       pw.intercept + pw.estimate * xhi);
  put (h, "<g class=\"big\">");
  for (size_t g = 0; g < pw.groups_used; g++)
    dot (h, &fr, pw.log_mean[g], pw.log_var[g], 3.5);
  put (h, "</g>\n");
  svg_end (h);
  snprintf (buf, sizeof buf, "%s: %zu groups of rows by fitted value%s.  Slope K = %.4g (95%% "
            "interval %.4g to %.4g) in Var y = c mu^K: about 0 for constant variance, 1 for "
            "poisson-like counts, 2 for a constant coefficient of variation (gamma), 3 for "
            "the inverse gaussian; nearest family: %s.", id, pw.groups_used,
            pw.groups_left_out ? " (groups with mean fitted value <= 0 left out)" : "",
            pw.estimate, pw.lo, pw.hi, pw.suggested ? pw.suggested : "none");
  fig_caption (h, buf);
}

/* ---------------------------------------------------------------- sections */

static void
section_head (hw *h, const bl_batch_row *row)
{
  put (h, "<section class=\"job\" id=\"");
  put_id (h, row->job);
  put (h, "\">\n<h2>");
  esc (h, row->job);
  putf (h, " <span class=\"badge %s\">%s</span></h2>\n", row->ok ? "ok" : "failed",
        row->ok ? "done" : "failed");
}

static int
finish (hw *h, bl_err *err)
{
  if (fflush (h->o) != 0 || ferror (h->o) || h->bad)
    return bl_fail (err, BL_EIO, "output", "write failed");
  return BL_OK;
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
rank_table (hw *h, const bl_compare *c, const size_t *order, size_t m)
{
  const int disc = bl_compare_integer_y (c);
  putf (h, "<div class=\"wide\"><table class=\"rank\">\n<thead><tr><th>#</th><th>id</th>"
        "<th>description</th><th>k</th><th>%s</th><th>&#916; AIC</th><th>weight</th>"
        "<th>cv RMSE</th><th>spread ratio</th><th>normality p</th><th>notes</th></tr>"
        "</thead>\n<tbody>\n", disc ? "AIC (discretized)" : "AIC");
  for (size_t r = 0; r < m; r++) {
    const bl_candidate *k = bl_compare_get (c, order[r]);
    const char *cls = k->rank_position == 1 ? "win"
                      : !k->rank_position ? "off"
                      : k->delta_aic <= BL_COMPARE_DELTA ? "tie" : "";
    putf (h, "<tr%s%s%s>", *cls ? " class=\"" : "", cls, *cls ? "\"" : "");
    if (k->rank_position)
      putf (h, "<td class=\"n\">%zu</td>", k->rank_position);
    else
      put (h, "<td class=\"n\">" DASH "</td>");
    put (h, "<td class=\"id\">");
    esc (h, k->id);
    put (h, "</td><td>");
    esc (h, k->description);
    if (isfinite (k->lambda))
      putf (h, " (lambda %.4g)", k->lambda);
    if (isfinite (k->variance_power))
      putf (h, " (K %.4g)", k->variance_power);
    put (h, "</td>");
    if (k->converged)
      putf (h, "<td class=\"n\">%zu</td>", k->k);
    else
      put (h, "<td class=\"n\">" DASH "</td>");
    put (h, "<td class=\"n\">");
    fix2 (h, disc ? k->aic_discrete : k->aic);
    put (h, "</td><td class=\"n\">");
    fix2 (h, k->delta_aic);
    put (h, "</td>");
    td_num (h, k->akaike_weight);
    td_num (h, k->cv_rmse);
    putf (h, "<td class=\"n%s\">", k->spread_flag ? " flag" : "");
    num (h, k->spread_ratio);
    put (h, "</td>");
    td_num (h, k->normality_p);
    put (h, "<td class=\"notes\">");
    for (size_t j = 0; j < k->notes.n; j++) {
      if (j)
        put (h, "<br/>");
      esc (h, k->notes.msg[j]);
    }
    put (h, "</td></tr>\n");
  }
  put (h, "</tbody></table></div>\n");
}

/* A comparison's section: the ranked table, the advice and the plots of P. */
static int
compare_section (hw *h, const bl_compare *c, const char *resp, size_t n, unsigned long seed,
                 const bl_job_plots *p, bl_err *err)
{
  const bl_warnings *adv = bl_compare_advice (c);
  size_t order[BL_COMPARE_MAX], m = rank_order (c, order);
  int st = BL_OK;
  put (h, "<p class=\"meta\">Comparison of variance treatments for <b>");
  esc (h, resp);
  putf (h, "</b> on the same %zu rows%s; ranked by %s; cross-validation %zu folds; seed %lu "
        "(folds and simulated null points), plots drawn with seed %lu.</p>\n", n,
        bl_compare_integer_y (c) ? " (integer-valued: continuous candidates scored by the "
        "discretized likelihood)" : "", bl_compare_integer_y (c) ? "the discretized AIC"
        : "AIC on the response's scale", bl_compare_folds (c), bl_compare_seed (c), seed);
  rank_table (h, c, order, m);
  put (h, "<h3>Recommendation</h3>\n<ul class=\"advice\">\n");
  for (size_t j = 0; j < adv->n; j++) {
    put (h, "<li>");
    esc (h, adv->msg[j]);
    put (h, "</li>\n");
  }
  put (h, "</ul>\n");
  if (!p->npanels)
    return BL_OK;
  putf (h, "<h3>Residuals against fitted values</h3>\n<p class=\"note\">One panel per fitted "
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
    if ((st = stopped (h, err)) != BL_OK)
      return st;
    fig_begin (h);
    plot_resid (h, k->fit, resp, head, what, 300.0, 220.0, p->panel[i].pearson);
    put (h, "</figure>\n");
  }
  put (h, "</div>\n");
  if (p->main) {
    const bl_candidate *w = bl_compare_get (c, (size_t) bl_compare_winner (c));
    put (h, "<h3>The winner, ");
    esc (h, w->id);
    put (h, "</h3>\n<div class=\"plots\">\n");
    if ((st = stopped (h, err)) != BL_OK)
      return st;
    plot_spread (h, w->fit, resp, w->id, p->null95, &p->spread);
    if ((st = stopped (h, err)) != BL_OK)
      return st;
    plot_qq (h, w->id, p->qq, p->nq, p->qq_p);
    put (h, "</div>\n");
  }
  if (p->profile || p->power_fit) {
    put (h, "<h3>Choosing a transform and a variance function</h3>\n<div class=\"plots\">\n");
    if ((st = stopped (h, err)) != BL_OK)
      return st;
    if (p->profile && bl_fit_transform (p->profile->fit)->nprofile > 0
        && (st = plot_profile (h, p->profile, resp, err)) != BL_OK)
      return st;
    if ((st = stopped (h, err)) != BL_OK)
      return st;
    if (p->power_fit)
      plot_meanvar (h, resp, "ls (ordinary least squares)", &p->power);
    put (h, "</div>\n");
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
    snprintf (buf, cap, "%s family, %s link (%s)", bl_fit_family (f)->name,
              bl_fit_link (f)->name, bl_fit_method (f) == BL_METHOD_OLS
              ? "ordinary least squares" : "maximum likelihood by IRLS");
  return buf;
}

static int
fit_section (hw *h, const bl_fit *f, const bl_design *d, const char *resp, unsigned long seed,
             const bl_job_plots *pl, bl_err *err)
{
  const bl_fit_stats *st = bl_fit_stats_get (f);
  const bl_warnings *wn = bl_fit_warnings (f);
  const double *beta = bl_fit_beta (f), *se = bl_fit_se (f), *lo = bl_fit_lo (f);
  const double *hi = bl_fit_hi (f);
  const int *al = bl_fit_aliased (f);
  const size_t p = bl_design_p (d);
  char buf[512];
  int s;
  put (h, "<p class=\"meta\">One model for <b>");
  esc (h, resp);
  put (h, "</b>: ");
  esc (h, model_name (f, buf, sizeof buf));
  putf (h, "; %zu rows; plots drawn with seed %lu.</p>\n", st->n, seed);
  if (!st->converged) {
    put (h, "<p class=\"why\">The fit failed: ");
    esc (h, bl_fit_status (f)->msg);
    put (h, "</p>\n");
    return BL_OK;
  }
  putf (h, "<div class=\"wide\"><table class=\"coef\">\n<thead><tr><th>term</th>"
        "<th>estimate</th><th>standard error</th><th>%.4g%% interval</th></tr></thead>\n"
        "<tbody>\n", 100.0 * st->level);
  for (size_t j = 0; j < p; j++) {
    put (h, "<tr><td class=\"id\">");
    esc (h, bl_design_label (d, j));
    put (h, "</td>");
    if (al && al[j]) {
      put (h, "<td class=\"n\" colspan=\"3\">aliased: not estimable from these rows</td>"
           "</tr>\n");
      continue;
    }
    td_num (h, beta[j]);
    td_num (h, se[j]);
    put (h, "<td class=\"n\">");
    num (h, lo[j]);
    put (h, " to ");
    num (h, hi[j]);
    put (h, "</td></tr>\n");
  }
  put (h, "</tbody></table></div>\n<p class=\"figs\">log-likelihood ");
  fix2 (h, st->loglik);
  put (h, "; AIC ");
  fix2 (h, st->aic);
  put (h, "; BIC ");
  fix2 (h, st->bic);
  putf (h, "; parameters k = %zu; dispersion ", st->k);
  num (h, st->phi_used);
  putf (h, "; standard errors: %s.</p>\n", st->se_kind ? st->se_kind : "model");
  if (wn && wn->n) {
    put (h, "<ul class=\"advice\">\n");
    for (size_t j = 0; j < wn->n; j++) {
      put (h, "<li>");
      esc (h, wn->msg[j]);
      put (h, "</li>\n");
    }
    put (h, "</ul>\n");
  }
  put (h, "<h3>Plots</h3>\n<div class=\"plots\">\n");
  if ((s = stopped (h, err)) != BL_OK)
    return s;
  fig_begin (h);
  plot_resid (h, f, resp, NULL, "the model", 460.0, 300.0, pl->panel[0].pearson);
  snprintf (buf, sizeof buf, "Pearson residuals against fitted values%s: an even band around "
            "0 means the variance model fits; a funnel, that the spread still changes with "
            "the mean.", fit_n (f) > BL_HTML_MAX_POINTS ? " (a binned density above 2000 "
            "rows: darker cells hold more rows)" : "");
  fig_caption (h, buf);
  /* the spread ratio's null point for these group sizes (diag.h), from the seeded RNG of
     the plot series (job_run.c) */
  if ((s = stopped (h, err)) != BL_OK)
    return s;
  plot_spread (h, f, resp, "the model", pl->null95, &pl->spread);
  if ((s = stopped (h, err)) != BL_OK)
    return s;
  plot_qq (h, "the model", pl->qq, pl->nq, pl->qq_p);
  if ((s = stopped (h, err)) != BL_OK)
    return s;
  plot_meanvar (h, resp, "the model", &pl->power);
  put (h, "</div>\n");
  return BL_OK;
}

int
bl_report_section_html (FILE *out, const bl_batch_row *row, const bl_compare *c,
                        const bl_fit *fit, const bl_design *d, unsigned long seed,
                        const bl_job_plots *plots, volatile sig_atomic_t *cancel, bl_err *err)
{
  hw h = { out, 0, cancel };
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
    put (&h, "<p class=\"why\">");
    esc (&h, row->ok ? "nothing was fitted" : row->message);
    put (&h, "</p>\n</section>\n");
    return finish (&h, err);
  }
  resp = bl_design_response (d);
  if (c)
    st = compare_section (&h, c, resp, bl_design_n (d), seed, plots, err);
  else
    st = fit_section (&h, fit, d, resp, seed, plots, err);
  if (st == BL_OK && row->message[0] && row->ok) {
    put (&h, "<p class=\"note\">");
    esc (&h, row->message);
    put (&h, "</p>\n");
  }
  put (&h, "</section>\n");
  return st == BL_OK ? finish (&h, err) : st;
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
  hw h = { out, 0, NULL };
  size_t ndone = 0;
  if (njobs && !rows)
    return bl_fail (err, BL_EINTERNAL, "report", "no summary rows given");
  for (size_t i = 0; i < njobs; i++)
    ndone += rows[i].ok != 0;
  put (&h, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n"
       "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n<title>");
  esc (&h, title);
  putf (&h, "</title>\n<style>\n%s</style>\n</head>\n<body>\n<header class=\"top\"><h1>",
        page_css);
  esc (&h, title);
  putf (&h, "</h1>\n<p>%zu job%s: %zu done, %zu failed</p></header>\n<main>\n", njobs,
        njobs == 1 ? "" : "s", ndone, njobs - ndone);
  put (&h, "<p class=\"caution\"><b>Caution.</b> A ranking is evidence, not proof: validate "
       "the chosen model on new data before acting on it.</p>\n");
  put (&h, "<h2 id=\"summary\">Jobs</h2>\n<div class=\"wide\"><table class=\"summary\">\n"
       "<thead><tr><th>job</th><th>status</th><th>method</th><th>winner</th><th>AIC</th>"
       "<th>&#916; to runner-up</th><th>spread ratio</th><th>n</th><th>message</th></tr>"
       "</thead>\n<tbody>\n");
  for (size_t i = 0; i < njobs; i++) {
    const bl_batch_row *w = &rows[i];
    put (&h, "<tr><td class=\"id\"><a href=\"#");
    put_id (&h, w->job);
    put (&h, "\">");
    esc (&h, w->job);
    putf (&h, "</a></td><td class=\"status-%s\">%s</td><td>", w->ok ? "ok" : "failed",
          w->ok ? "done" : "failed");
    esc (&h, w->method);
    put (&h, "</td><td class=\"id\">");
    esc (&h, w->winner);
    put (&h, "</td><td class=\"n\">");
    fix2 (&h, w->ok ? w->aic : NAN);
    put (&h, "</td><td class=\"n\">");
    fix2 (&h, w->ok ? w->delta : NAN);
    put (&h, "</td>");
    td_num (&h, w->ok ? w->spread_ratio : NAN);
    if (w->ok)
      putf (&h, "<td class=\"n\">%zu</td>", w->n);
    else
      put (&h, "<td class=\"n\">" DASH "</td>");
    put (&h, "<td>");
    esc (&h, w->message);
    put (&h, "</td></tr>\n");
  }
  put (&h, "</tbody></table></div>\n");
  for (size_t i = 0; i < njobs; i++) {
    if (sections && sections[i]) {
      put (&h, sections[i]);
    } else {           /* no section written: the row's reason stands in */
      section_head (&h, &rows[i]);
      put (&h, "<p class=\"why\">");
      esc (&h, rows[i].message[0] ? rows[i].message : "no report was written for this job");
      put (&h, "</p>\n</section>\n");
    }
  }
  put (&h, "</main>\n<footer>Written by ballast.  The page is self-contained: no scripts, no "
       "network resources; plots are inline SVG.</footer>\n</body>\n</html>\n");
  return finish (&h, err);
}
