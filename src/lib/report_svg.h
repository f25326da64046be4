/* report_svg.h -- the HTML report's private kit (not installed): an output with escaping and
   number formats (report_svg.c), axes, frames and marks of inline SVG (report_svg.c), and the
   plots drawn from a job's plot series (report_plots.c).  Used by report_html.c only. */
#ifndef BALLAST_REPORT_SVG_H
#define BALLAST_REPORT_SVG_H
#include <signal.h>
#include <stddef.h>
#include <stdio.h>
#include "compare.h"
#include "diag.h"
#include "error.h"
#include "fit.h"
#ifdef __cplusplus
extern "C" {
#endif

/* Above this many rows a residual panel is a binned density (a grid of shaded cells) and the
   normal quantile plot shows this many evenly spaced order statistics. */
#define BL_HTML_MAX_POINTS 2000
#define BL_HTML_BINS_X 30          /* density grid of a residual panel */
#define BL_HTML_BINS_Y 18
#define BL_HTML_PROFILE_DROP 40.0  /* the Box-Cox profile is shown down to this below its top */
#define BL_HTML_DASH "&#8211;"     /* a figure that does not exist */

/* ---------------------------------------------------------------- output */

/* The output: O the stream; BAD set once a write failed; CANCEL the caller's flag (may be
   NULL), polled between plots. */
typedef struct bl_hw { FILE *o; int bad; volatile sig_atomic_t *cancel; } bl_hw;

/* BL_ECANCEL (where "report", ERR filled) once the cancel flag is set, else BL_OK. */
int bl_hw_stopped (const bl_hw *h, bl_err *err);
/* Text as it is; printf-formatted text. */
void bl_hw_put (bl_hw *h, const char *s);
void bl_hw_putf (bl_hw *h, const char *fmt, ...)
#if defined(__GNUC__)
  __attribute__ ((format (printf, 2, 3)))
#endif
  ;
/* Text or an attribute value, escaped (S may be NULL: nothing). */
void bl_hw_esc (bl_hw *h, const char *s);
/* The element id of a job NAME ("job-" and NAME with other characters as '_'). */
void bl_hw_id (bl_hw *h, const char *name);
/* A number %.4g, %.2f, or a right-aligned %.4g cell; a dash when not finite. */
void bl_hw_num (bl_hw *h, double v);
void bl_hw_fix2 (bl_hw *h, double v);
void bl_hw_td_num (bl_hw *h, double v);
/* Flush: BL_OK, or BL_EIO (where "output") when this or any earlier write failed. */
int bl_hw_finish (bl_hw *h, bl_err *err);
/* A <figure> around a plot, and its caption (which closes it). */
void bl_hw_fig_begin (bl_hw *h);
void bl_hw_fig_caption (bl_hw *h, const char *text);

/* ---------------------------------------------------------------- SVG */

typedef struct bl_svg_axis { double lo, hi, step; } bl_svg_axis;

/* A plot: the SVG's size and the plotting area inside it. */
typedef struct bl_svg_frame {
  double W, H, left, top, w, h;
  bl_svg_axis x, y;
} bl_svg_frame;

/* An SVG coordinate: 2 decimals, never "-0.00". */
double bl_svg_c2 (double v);
/* The axis over [LO, HI] with about NTICKS steps of 1, 2 or 5 times a power of ten. */
void bl_svg_axis_set (bl_svg_axis *a, double lo, double hi, int nticks);
/* A W x H plot, with room for a heading line when HEADING is nonzero. */
void bl_svg_frame_init (bl_svg_frame *f, double W, double H, int heading);
/* Data to SVG coordinates; whether (X, Y) lies inside the axes. */
double bl_svg_fx (const bl_svg_frame *f, double v);
double bl_svg_fy (const bl_svg_frame *f, double v);
int bl_svg_inside (const bl_svg_frame *f, double x, double y);
/* The same rounded as a coordinate (bl_svg_c2). */
double bl_svg_px (const bl_svg_frame *f, double v);
double bl_svg_py (const bl_svg_frame *f, double v);
/* <svg> with its <title> (and a heading when not NULL); </svg>. */
void bl_svg_begin (bl_hw *h, const bl_svg_frame *f, const char *title, const char *heading);
void bl_svg_end (bl_hw *h);
/* Grid, frame, ticks and the axis labels. */
void bl_svg_axes (bl_hw *h, const bl_svg_frame *f, const char *xlab, const char *ylab);
/* A line of CSS class CLS in data coordinates; a dot of radius R. */
void bl_svg_seg (bl_hw *h, const bl_svg_frame *f, const char *cls, double x1, double y1,
                 double x2, double y2);
void bl_svg_dot (bl_hw *h, const bl_svg_frame *f, double x, double y, double r);
/* N points, or above BL_HTML_MAX_POINTS a binned density. */
void bl_svg_scatter (bl_hw *h, const bl_svg_frame *f, const double *x, const double *y,
                     size_t n);
/* The range of the finite values of V (HUGE_VAL, -HUGE_VAL when none). */
void bl_svg_range (const double *v, size_t n, double *lo, double *hi);

/* ---------------------------------------------------------------- plots (report_plots.c) */

/* Pearson residuals R (length n of F) against F's fitted values: a W x H panel with an
   optional HEADING; WHAT names the fit in the title. */
void bl_html_plot_resid (bl_hw *h, const bl_fit *f, const char *resp, const char *heading,
                         const char *what, double W, double H, const double *r);
/* F's spread groups SP with the level NULL95 times the smallest group's rms. */
void bl_html_plot_spread (bl_hw *h, const bl_fit *f, const char *resp, const char *id,
                          double null95, const bl_spread *sp);
/* Normal quantile plot of the N sorted quantile residuals Q with their p-value PVAL. */
void bl_html_plot_qq (bl_hw *h, const char *id, const double *q, size_t n, double pval);
/* The Box-Cox profile of candidate K (ls-bc).  BL_OK or BL_ENOMEM. */
int bl_html_plot_profile (bl_hw *h, const bl_candidate *k, const char *resp, bl_err *err);
/* The log-log mean-variance points PW with their fitted line. */
void bl_html_plot_meanvar (bl_hw *h, const char *resp, const char *id, const bl_power *pw);

#ifdef __cplusplus
}
#endif
#endif
