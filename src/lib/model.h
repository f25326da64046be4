/* model.h -- a fitted model saved as JSON (model_write.c), read back (model_read.c), and
   used to predict on new data (predict.c), with the predictions written as CSV
   (predict_csv.c). */
#ifndef BALLAST_MODEL_H
#define BALLAST_MODEL_H
#include <stdio.h>
#include "error.h"
#include "fit.h"
#include "table.h"
#include "terms.h"
#ifdef __cplusplus
extern "C" {
#endif

#define BL_MODEL_FORMAT 1               /* "format_version" */
#define BL_MODEL_MAX_BYTES ((long) 256 << 20)   /* a larger model file is refused */
#define BL_MODEL_MAX_COLUMNS 20000      /* more model columns are refused (the covariance
                                           alone would take 3.2 GB) */
#define BL_MODEL_RESIDUALS_MAX 5000     /* residuals kept for smearing; above, a documented
                                           deterministic subsample (every k-th row) */

/* Write FIT as a model file (doc/model-format.md): format version, response, terms (canonical
   text and labels), intercept, categorical columns with their levels and references, the
   column labels, method, family, link, offset, weights, variance function and K, transform
   with lambda and shift, smearing residuals, coefficients, covariance, dispersion, dof_resid,
   level.  BL_OK or BL_EIO; BL_EDATA when the fit did not converge (nothing to save). */
BL_API int bl_model_write (FILE *out, const bl_fit *fit, const bl_terms *terms,
                           const bl_terms *offset, const char *weights, bl_err *err);

typedef struct bl_model bl_model;

/* Read a model file.  NULL with ERR: BL_EIO (unreadable), BL_EDATA (not a ballast model, a
   newer format, or inconsistent: where = "FILE" and the key), BL_ENOMEM. */
BL_API bl_model *bl_model_read (const char *path, bl_err *err);
BL_API void bl_model_free (bl_model *m);

/* Predictions for every row of T, in order.  Each array has length nrows(T). */
typedef struct bl_prediction {
  size_t n;
  double *mean, *mean_lo, *mean_hi, *pred_lo, *pred_hi;
  double *median;                     /* transformed models: the naive back-transform
                                         h^-1(x'b) - shift, the median of y when the
                                         transformed errors are symmetric; else NAN */
  int has_response;                   /* T holds the response: scores below exist */
  double deviance, rmse, mae;         /* out-of-sample, on y's scale */
  size_t n_scored;                    /* rows with the response, over which they are taken */
} bl_prediction;

/* Predict on T (read with the model's categorical columns forced: see
   bl_model_table_opts).  A missing column, a missing or out-of-domain value in a used column,
   or an unseen categorical level is BL_EDATA with where = "FILE:LINE" of the row; nothing is
   returned then.  LEVEL in (0, 1) is the level of both intervals; 0 or NAN takes the
   fit's level; anything else is BL_ESPEC.  The intervals and scores are those of
   doc/model-format.md ("Prediction"); the prediction intervals of the poisson, gamma and
   inverse gaussian families leave out the uncertainty of the coefficients. */
BL_API bl_prediction *bl_model_predict (const bl_model *m, const bl_table *t, double level,
                                        bl_err *err);
BL_API void bl_prediction_free (bl_prediction *p);

/* Options of bl_prediction_write_csv; bl_prediction_csv_opts_init gives no kept columns
   and no median. */
typedef struct bl_prediction_csv_opts {
  const char *const *keep;            /* NKEEP columns of T written after the predictions */
  size_t nkeep;
  int median;                         /* nonzero: a `median` column after pred_hi */
} bl_prediction_csv_opts;
BL_API void bl_prediction_csv_opts_init (bl_prediction_csv_opts *opt);

/* Write P, the predictions for the rows of T, as CSV to OUT: a header, then one record per
   row of T in order with the columns row (1-based data row), mean, mean_lo, mean_hi,
   pred_lo, pred_hi, then median when OPT->median is set (predict --median), and then the
   OPT->nkeep columns named in OPT->keep as T holds them (numbers %.17g, categorical levels
   as text; missing cells empty; fields quoted per RFC 4180 when needed).  OPT NULL takes
   the defaults.  Non-finite numbers are written inf, -inf, or an empty field for NAN.  A
   kept name that T lacks, or that repeats an output column, is BL_EDATA (where = "FILE:1")
   before anything is written.  BL_OK, or BL_EIO when a write failed. */
BL_API int bl_prediction_write_csv (FILE *out, const bl_prediction *p, const bl_table *t,
                                    const bl_prediction_csv_opts *opt, bl_err *err);

/* Table options for reading new data for M: its categorical columns forced categorical.
   The pointers stay valid until bl_model_free. */
BL_API void bl_model_table_opts (const bl_model *m, bl_table_opts *opt);

/* Accessors of a model read back; pointers valid until bl_model_free.  bl_model_beta has
   length bl_model_p (NAN for aliased columns), bl_model_cov is p x p column-major (NAN in
   aliased rows and columns); bl_model_level is the confidence level of the fit. */
BL_API size_t bl_model_p (const bl_model *m);
BL_API const char *bl_model_label (const bl_model *m, size_t j);
BL_API const double *bl_model_beta (const bl_model *m);
BL_API const double *bl_model_cov (const bl_model *m);
BL_API const char *bl_model_response (const bl_model *m);
BL_API double bl_model_level (const bl_model *m);

#ifdef __cplusplus
}
#endif
#endif
