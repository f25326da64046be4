/* predict_csv.c -- the prediction table as CSV (bl_prediction_write_csv): one record per
   new row with the means, both intervals, the median when asked for, and columns of the new
   data kept alongside. */
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include "model.h"

/* One CSV field: quoted (RFC 4180, section 2) when it holds a comma, a quote or a line
   break, with quotes doubled. */
static void
put_field (FILE *out, const char *s)
{
  if (!strpbrk (s, ",\"\r\n")) {
    fputs (s, out);
    return;
  }
  fputc ('"', out);
  for (; *s; s++) {
    if (*s == '"')
      fputc ('"', out);
    fputc (*s, out);
  }
  fputc ('"', out);
}

static void
put_num (FILE *out, double x)
{
  if (isnan (x))
    return;
  if (isinf (x))
    fputs (x > 0 ? "inf" : "-inf", out);
  else
    fprintf (out, "%.17g", x == 0.0 ? 0.0 : x);
}

void
bl_prediction_csv_opts_init (bl_prediction_csv_opts *opt)
{
  opt->keep = NULL;
  opt->nkeep = 0;
  opt->median = 0;
}

/* KEEP names a column of T (where W = "FILE:1") that no output column has. */
static int
check_keep (const bl_table *t, const char *const *keep, size_t nkeep,
            const char *const *head, size_t nh, const char *w, bl_err *err)
{
  for (size_t k = 0; k < nkeep; k++) {
    if (bl_table_find (t, keep[k]) < 0)
      return bl_fail (err, BL_EDATA, w, "no column '%s' to keep", keep[k]);
    for (size_t h = 0; h < nh; h++)
      if (strcmp (keep[k], head[h]) == 0)
        return bl_fail (err, BL_EDATA, w, "cannot keep column '%s': the output has a column "
                        "of that name", keep[k]);
  }
  return BL_OK;
}

/* Cell I of the kept column NAME of T: a number, or a categorical level as a field. */
static void
put_kept (FILE *out, const bl_table *t, const char *name, size_t i)
{
  const size_t j = (size_t) bl_table_find (t, name);
  if (bl_table_is_numeric (t, j)) {
    put_num (out, bl_table_num (t, j)[i]);
  } else {
    const int32_t c = bl_table_codes (t, j)[i];
    if (c >= 0)
      put_field (out, bl_table_level (t, j, (size_t) c));
  }
}

int
bl_prediction_write_csv (FILE *out, const bl_prediction *p, const bl_table *t,
                         const bl_prediction_csv_opts *opt, bl_err *err)
{
  static const char *const head[] = { "row", "mean", "mean_lo", "mean_hi", "pred_lo",
                                      "pred_hi", "median" };
  bl_prediction_csv_opts defaults;
  size_t nh;
  char w[1100];
  int status;
  if (!opt) {
    bl_prediction_csv_opts_init (&defaults);
    opt = &defaults;
  }
  nh = sizeof head / sizeof head[0] - (opt->median ? 0 : 1);
  snprintf (w, sizeof w, "%s:1", bl_table_source (t));
  if ((status = check_keep (t, opt->keep, opt->nkeep, head, nh, w, err)) != BL_OK)
    return status;
  for (size_t h = 0; h < nh; h++)
    fprintf (out, "%s%s", h ? "," : "", head[h]);
  for (size_t k = 0; k < opt->nkeep; k++) {
    fputc (',', out);
    put_field (out, opt->keep[k]);
  }
  fputc ('\n', out);
  for (size_t i = 0; i < p->n; i++) {
    const double v[] = { p->mean[i], p->mean_lo[i], p->mean_hi[i], p->pred_lo[i],
                         p->pred_hi[i], p->median[i] };
    fprintf (out, "%zu", i + 1);
    for (size_t c = 0; c < nh - 1; c++) {
      fputc (',', out);
      put_num (out, v[c]);
    }
    for (size_t k = 0; k < opt->nkeep; k++) {
      fputc (',', out);
      put_kept (out, t, opt->keep[k], i);
    }
    if (fputc ('\n', out) == EOF)
      break;
  }
  if (ferror (out))
    return bl_fail (err, BL_EIO, "predict", "write failed: %s", strerror (errno));
  return BL_OK;
}
