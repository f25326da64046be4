/* report_svg.c -- the HTML report's kit (report_svg.h): writing to the page with escaping
   and fixed number formats, and the pieces of an inline SVG plot (axes with round ticks,
   frames, lines, dots, a binned density).  The page is well-formed XML: text and attribute
   values are escaped, with numeric character references only; SVG coordinates are rounded to
   2 decimals, so the same input gives the same bytes. */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include "report_svg.h"

/* ---------------------------------------------------------------- output */

/* BL_ECANCEL (with ERR filled) once the caller's cancel flag is set, else BL_OK.  A plot
   over a million rows sorts and bins them in a fraction of a second, so polling between
   plots keeps a SIGINT's delay under one. */
int
bl_hw_stopped (const bl_hw *h, bl_err *err)
{
  if (h->cancel && *h->cancel)
    return bl_fail (err, BL_ECANCEL, "report", "the report was cancelled");
  return BL_OK;
}

void
bl_hw_put (bl_hw *h, const char *s)
{
  if (fputs (s, h->o) == EOF)
    h->bad = 1;
}

void
bl_hw_putf (bl_hw *h, const char *fmt, ...)
{
  va_list ap;
  va_start (ap, fmt);
  if (vfprintf (h->o, fmt, ap) < 0)
    h->bad = 1;
  va_end (ap);
}

/* Text and attribute values: the five XML specials as references; other control characters
   (not allowed in XML) as '?'. */
void
bl_hw_esc (bl_hw *h, const char *s)
{
  if (!s)
    return;
  for (; *s; s++) {
    const unsigned char ch = (unsigned char) *s;
    switch (ch) {
    case '&': bl_hw_put (h, "&amp;"); break;
    case '<': bl_hw_put (h, "&lt;"); break;
    case '>': bl_hw_put (h, "&gt;"); break;
    case '"': bl_hw_put (h, "&quot;"); break;
    case '\'': bl_hw_put (h, "&#39;"); break;
    default:
      if (fputc (ch < 0x20 && ch != '\n' && ch != '\t' ? '?' : ch, h->o) == EOF)
        h->bad = 1;
    }
  }
}

/* An element id from a job name: letters, digits, '-', '_' and '.' kept, anything else '_'
   (valid spec names are kept whole, so ids stay unique). */
void
bl_hw_id (bl_hw *h, const char *name)
{
  bl_hw_put (h, "job-");
  for (; *name; name++) {
    const char ch = *name;
    const int ok = (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z')
                   || (ch >= '0' && ch <= '9') || ch == '-' || ch == '_' || ch == '.';
    if (fputc (ok ? ch : '_', h->o) == EOF)
      h->bad = 1;
  }
}

void
bl_hw_num (bl_hw *h, double v)
{
  if (isfinite (v))
    bl_hw_putf (h, "%.4g", v == 0.0 ? 0.0 : v);
  else
    bl_hw_put (h, BL_HTML_DASH);
}

void
bl_hw_fix2 (bl_hw *h, double v)
{
  if (isfinite (v))
    bl_hw_putf (h, "%.2f", fabs (v) < 0.005 ? 0.0 : v);
  else
    bl_hw_put (h, BL_HTML_DASH);
}

/* A right-aligned number cell. */
void
bl_hw_td_num (bl_hw *h, double v)
{
  bl_hw_put (h, "<td class=\"n\">");
  bl_hw_num (h, v);
  bl_hw_put (h, "</td>");
}

/* An SVG coordinate: 2 decimals, never "-0.00". */
double
bl_svg_c2 (double v)
{
  v = round (v * 100.0) / 100.0;
  return v == 0.0 ? 0.0 : v;
}

/* BL_OK, or BL_EIO when a write failed (flushing, or any earlier write). */
int
bl_hw_finish (bl_hw *h, bl_err *err)
{
  if (fflush (h->o) != 0 || ferror (h->o) || h->bad)
    return bl_fail (err, BL_EIO, "output", "write failed");
  return BL_OK;
}

/* ---------------------------------------------------------------- axes and frames */

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
void
bl_svg_axis_set (bl_svg_axis *a, double lo, double hi, int nticks)
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

void
bl_svg_frame_init (bl_svg_frame *f, double W, double H, int heading)
{
  f->W = W;
  f->H = H;
  f->left = 62.0;
  f->top = heading ? 26.0 : 12.0;
  f->w = W - f->left - 14.0;
  f->h = H - f->top - 44.0;
}

double
bl_svg_fx (const bl_svg_frame *f, double v)
{
  return f->left + (v - f->x.lo) / (f->x.hi - f->x.lo) * f->w;
}

double
bl_svg_fy (const bl_svg_frame *f, double v)
{
  return f->top + f->h - (v - f->y.lo) / (f->y.hi - f->y.lo) * f->h;
}

/* Inside the frame, with a little slack for axis ends computed as k * step. */
double
bl_svg_px (const bl_svg_frame *f, double v)
{
  return bl_svg_c2 (bl_svg_fx (f, v));
}

double
bl_svg_py (const bl_svg_frame *f, double v)
{
  return bl_svg_c2 (bl_svg_fy (f, v));
}

int
bl_svg_inside (const bl_svg_frame *f, double x, double y)
{
  const double ex = 1e-9 * (f->x.hi - f->x.lo), ey = 1e-9 * (f->y.hi - f->y.lo);
  return x >= f->x.lo - ex && x <= f->x.hi + ex && y >= f->y.lo - ey && y <= f->y.hi + ey;
}

/* The tick values of A, from a whole multiple of the step; K-th one into *V. */
static size_t
ticks (const bl_svg_axis *a, double *v, size_t cap)
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

void
bl_svg_begin (bl_hw *h, const bl_svg_frame *f, const char *title, const char *heading)
{
  bl_hw_putf (h, "<svg class=\"plot\" width=\"%.0f\" height=\"%.0f\" viewBox=\"0 0 %.0f %.0f\" "
              "role=\"img\"><title>", f->W, f->H, f->W, f->H);
  bl_hw_esc (h, title);
  bl_hw_put (h, "</title>\n");
  if (heading) {
    bl_hw_putf (h, "<text class=\"head\" x=\"%.2f\" y=\"16\">", bl_svg_c2 (f->left));
    bl_hw_esc (h, heading);
    bl_hw_put (h, "</text>\n");
  }
}

void
bl_svg_end (bl_hw *h)
{
  bl_hw_put (h, "</svg>\n");
}

/* Grid lines, the frame, tick labels and the two axis labels. */
void
bl_svg_axes (bl_hw *h, const bl_svg_frame *f, const char *xlab, const char *ylab)
{
  double tx[64], ty[64];
  const size_t nx = ticks (&f->x, tx, 64), ny = ticks (&f->y, ty, 64);
  bl_hw_put (h, "<g class=\"grid\">");
  for (size_t i = 0; i < nx; i++)
    bl_hw_putf (h, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>", bl_svg_px (f, tx[i]),
                bl_svg_c2 (f->top), bl_svg_px (f, tx[i]), bl_svg_c2 (f->top + f->h));
  for (size_t i = 0; i < ny; i++)
    bl_hw_putf (h, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>", bl_svg_c2 (f->left),
                bl_svg_py (f, ty[i]), bl_svg_c2 (f->left + f->w), bl_svg_py (f, ty[i]));
  bl_hw_put (h, "</g>\n");
  bl_hw_putf (h, "<rect class=\"frame\" x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\"/>\n",
              bl_svg_c2 (f->left), bl_svg_c2 (f->top), bl_svg_c2 (f->w), bl_svg_c2 (f->h));
  bl_hw_put (h, "<g class=\"tx\">");
  for (size_t i = 0; i < nx; i++)
    bl_hw_putf (h, "<text x=\"%.2f\" y=\"%.2f\">%.6g</text>", bl_svg_px (f, tx[i]),
                bl_svg_c2 (f->top + f->h + 14.0), tx[i]);
  bl_hw_put (h, "</g>\n<g class=\"ty\">");
  for (size_t i = 0; i < ny; i++)
    bl_hw_putf (h, "<text x=\"%.2f\" y=\"%.2f\">%.6g</text>", bl_svg_c2 (f->left - 5.0),
                bl_svg_c2 (bl_svg_fy (f, ty[i]) + 4.0), ty[i]);
  bl_hw_put (h, "</g>\n");
  bl_hw_putf (h, "<text class=\"lab\" x=\"%.2f\" y=\"%.2f\">", bl_svg_c2 (f->left + f->w / 2.0),
              bl_svg_c2 (f->H - 8.0));
  bl_hw_esc (h, xlab);
  bl_hw_putf (h, "</text>\n<text class=\"lab\" transform=\"translate(13,%.2f) rotate(-90)\">",
              bl_svg_c2 (f->top + f->h / 2.0));
  bl_hw_esc (h, ylab);
  bl_hw_put (h, "</text>\n");
}

/* A line in data coordinates, clipped by the caller's choice of ends; CLS a CSS class. */
void
bl_svg_seg (bl_hw *h, const bl_svg_frame *f, const char *cls, double x1, double y1, double x2,
            double y2)
{
  bl_hw_putf (h, "<line class=\"%s\" x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>\n", cls,
              bl_svg_px (f, x1), bl_svg_py (f, y1), bl_svg_px (f, x2), bl_svg_py (f, y2));
}

void
bl_svg_dot (bl_hw *h, const bl_svg_frame *f, double x, double y, double r)
{
  bl_hw_putf (h, "<circle cx=\"%.2f\" cy=\"%.2f\" r=\"%.1f\"/>", bl_svg_px (f, x),
              bl_svg_py (f, y), r);
}

/* Rows as points, or above BL_HTML_MAX_POINTS as a binned density: a BINS_X x BINS_Y grid
   over the frame, each non-empty cell shaded by sqrt(count / largest count), so that sparse
   cells stay visible. */
void
bl_svg_scatter (bl_hw *h, const bl_svg_frame *f, const double *x, const double *y, size_t n)
{
  if (n <= BL_HTML_MAX_POINTS) {
    bl_hw_put (h, "<g class=\"pts\">");
    for (size_t i = 0; i < n; i++)
      if (bl_svg_inside (f, x[i], y[i]))
        bl_svg_dot (h, f, x[i], y[i], 1.8);
    bl_hw_put (h, "</g>\n");
    return;
  }
  {
    unsigned long cnt[BL_HTML_BINS_Y][BL_HTML_BINS_X], top = 0;
    const double cw = f->w / BL_HTML_BINS_X, ch = f->h / BL_HTML_BINS_Y;
    memset (cnt, 0, sizeof cnt);
    for (size_t i = 0; i < n; i++) {
      long bx, by;
      if (!bl_svg_inside (f, x[i], y[i]))
        continue;
      bx = (long) floor ((x[i] - f->x.lo) / (f->x.hi - f->x.lo) * BL_HTML_BINS_X);
      by = (long) floor ((y[i] - f->y.lo) / (f->y.hi - f->y.lo) * BL_HTML_BINS_Y);
      bx = bx < 0 ? 0 : bx >= BL_HTML_BINS_X ? BL_HTML_BINS_X - 1 : bx;
      by = by < 0 ? 0 : by >= BL_HTML_BINS_Y ? BL_HTML_BINS_Y - 1 : by;
      cnt[by][bx]++;
      if (cnt[by][bx] > top)
        top = cnt[by][bx];
    }
    bl_hw_put (h, "<g class=\"dens\">");
    for (int by = 0; by < BL_HTML_BINS_Y; by++)
      for (int bx = 0; bx < BL_HTML_BINS_X; bx++)
        if (cnt[by][bx])
          bl_hw_putf (h, "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" "
                      "fill-opacity=\"%.2f\"><title>%lu</title></rect>",
                      bl_svg_c2 (f->left + bx * cw), bl_svg_c2 (f->top + f->h - (by + 1) * ch),
                      bl_svg_c2 (cw), bl_svg_c2 (ch),
                0.08 + 0.92 * sqrt ((double) cnt[by][bx] / (double) top), cnt[by][bx]);
    bl_hw_put (h, "</g>\n");
  }
}

void
bl_hw_fig_begin (bl_hw *h)
{
  bl_hw_put (h, "<figure>\n");
}

void
bl_hw_fig_caption (bl_hw *h, const char *text)
{
  bl_hw_put (h, "<figcaption>");
  bl_hw_esc (h, text);
  bl_hw_put (h, "</figcaption>\n</figure>\n");
}

void
bl_svg_range (const double *v, size_t n, double *lo, double *hi)
{
  *lo = HUGE_VAL;
  *hi = -HUGE_VAL;
  for (size_t i = 0; i < n; i++)
    if (isfinite (v[i])) {
      *lo = v[i] < *lo ? v[i] : *lo;
      *hi = v[i] > *hi ? v[i] : *hi;
    }
}
