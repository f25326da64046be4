/* report.h -- writers: a const result in, formatted text or JSON out; nothing computed. */
#ifndef BALLAST_REPORT_H
#define BALLAST_REPORT_H
#include <stdio.h>
#include "error.h"
#include "compare.h"
#include "diag.h"
#include "fit.h"
#include "terms.h"
#ifdef __cplusplus
extern "C" {
#endif

/* What the writers need to know beyond the fit: how the model was asked for. */
typedef struct bl_report_info {
  const char *source;          /* data source as given ("data/pumps.csv.gz", "-") */
  const bl_terms *terms;       /* the model's terms (for "terms") */
  const bl_terms *offset;      /* NULL when none */
  const char *weights;         /* prior-weight column, or NULL */
  const char *tool_version;    /* "0.1.0" */
  const bl_nested *against;    /* a nested-model test to report, or NULL */
  const bl_bf *by;             /* diagnose --by: spread by group, or NULL */
} bl_report_info;

/* Write FIT as one JSON document to OUT (keys documented in doc/json.md).  Returns BL_OK or
   BL_EIO when a write failed. */
BL_API int bl_report_fit_json (FILE *out, const bl_fit *fit, const bl_report_info *info,
                               bl_err *err);

/* Write FIT as the human-readable report.  Returns BL_OK or BL_EIO. */
BL_API int bl_report_fit_text (FILE *out, const bl_fit *fit, const bl_report_info *info,
                               bl_err *err);

/* Diagnostics of FIT (doc/json.md, "diagnose"): JSON or text.  BL_OK or BL_EIO. */
BL_API int bl_report_diag_json (FILE *out, const bl_fit *fit, const bl_diag *dg,
                                const bl_report_info *info, bl_err *err);
BL_API int bl_report_diag_text (FILE *out, const bl_fit *fit, const bl_diag *dg,
                                const bl_report_info *info, bl_err *err);

/* The residual table as CSV: row (1-based data row of the table), fitted, response, pearson,
   deviance, working, quantile, leverage, cooks.  BL_OK or BL_EIO; BL_ECANCEL once CANCEL
   (may be NULL; polled every 4096 rows) is set, with the output then incomplete (the caller
   writes to a temporary and discards it). */
BL_API int bl_report_residuals_csv (FILE *out, const bl_fit *fit, const bl_resid_table *t,
                                    volatile sig_atomic_t *cancel, bl_err *err);

/* A comparison (doc/json.md, "compare"): JSON or text.  D is the design the candidates share. */
BL_API int bl_report_compare_json (FILE *out, const bl_compare *c, const bl_design *d,
                                   const bl_report_info *info, bl_err *err);
BL_API int bl_report_compare_text (FILE *out, const bl_compare *c, const bl_design *d,
                                   const bl_report_info *info, bl_err *err);

#ifdef __cplusplus
}
#endif
#endif
