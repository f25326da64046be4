/* design.h -- the model's row set and its design matrix X, built from a table and terms.

   The design does not store X as an n x p matrix: it keeps, for each column of X, a short
   recipe over the table's columns (a numeric vector it owns when a term needs computing, such
   as log(hours), indicator tests for categorical levels, and products for cross terms), and
   fills any block of rows on demand.  So memory stays at the table plus O(n) per derived
   term, and the engines stream X block by block. */
#ifndef BALLAST_DESIGN_H
#define BALLAST_DESIGN_H
#include <stddef.h>
#include "error.h"
#include "table.h"
#include "terms.h"
#ifdef __cplusplus
extern "C" {
#endif

typedef struct bl_design bl_design;   /* opaque; defined in design.c; it keeps a pointer to
                                         its table, which must outlive it */

/* The indicator columns of one categorical column fixed from outside, as when a saved model
   is applied to new data: one column per entry of LEVELS, in that order, labelled
   "COLUMN=LEVEL", whether or not the level occurs in the table, and none for REFERENCE.  A
   used row whose level is neither in LEVELS nor REFERENCE is BL_EDATA naming its line. */
typedef struct bl_design_levels {
  const char *column;              /* a categorical column of the table */
  const char *const *levels;       /* the levels that have an indicator column */
  size_t nlevels;
  const char *reference;           /* the level left out */
} bl_design_levels;

typedef struct bl_design_opts {
  int intercept;                   /* nonzero (default): column 0 is "intercept" */
  const char *const *reference;    /* "COL=LEVEL" reference levels; may be NULL */
  size_t n_reference;
  const char *weights;             /* prior-weight column name, or NULL */
  const bl_terms *offset;          /* exactly one term (e.g. log(hours)), or NULL */
  const char *variance;            /* a column the variance is proportional to a power of
                                      (weighted least squares), or NULL; every used value
                                      must be > 0 (BL_EDATA naming the row); its missing
                                      cells drop rows as "missing 'COL'" after the offset's */
  /* Fixed levels for categorical columns (see bl_design_levels); may be NULL.  An entry
     takes precedence over a reference entry for the same column; entries for columns that
     no term uses are ignored. */
  const bl_design_levels *levels;
  size_t n_levels;
  /* Nonzero: RESPONSE may be NULL or absent from the table (then bl_design_y is NULL), and
     its missing cells drop no row (y is NAN there).  0 (default): as described below. */
  int response_optional;
  /* Nonzero: a missing cell in a column the rows need is BL_EDATA with where = "FILE:LINE"
     ("missing value in 'age'") instead of dropping the row, so that the design keeps every
     table row in order.  0 (default): rows are dropped and counted. */
  int missing_error;
} bl_design_opts;

BL_API void bl_design_opts_init (bl_design_opts *opt);

/* Build the row set and the recipe for X.

   Rows: a row is used when the response, every column any term uses, the weight column and
   the offset's columns are all non-missing.  Dropped rows are counted by reason, the reason
   being the first missing column in the order response, terms (left to right), weights,
   offset: "missing 'age'".

   Errors (NULL returned, ERR filled):
   - BL_ESPEC: RESPONSE, a term's column, the weight column or a reference column is not in
     the table (where "--response", "--terms", "--weights", "--offset", "--reference"); a
     reference level that the column does not have; a categorical column inside log, sqrt, exp
     or pow, or as response, weight or offset; a reference entry not of the form COL=LEVEL.
   - BL_EDATA: no rows left after dropping missing cells; a weight <= 0 or non-finite; a
     domain error in a used row (log of a value <= 0, sqrt of a value < 0, exp or pow that
     overflows or is not a real number): where = "FILE:LINE" (the row's line) and the message
     names the term and the value ("log(hours): value -3 is not > 0").
   - BL_ENOMEM.

   Column labels: "intercept"; a numeric term's canonical label; a categorical column C gives
   one indicator per non-reference level, labelled "C=LEVEL" in level order; cross(a,b) gives
   every product of a's columns with b's columns, labelled "cross(A,B)" with A and B the
   component labels (cross(site=B,age)). */
BL_API bl_design *bl_design_new (const bl_table *t, const char *response, const bl_terms *terms,
                                 const bl_design_opts *opt, bl_err *err);
BL_API void bl_design_free (bl_design *d);

BL_API size_t bl_design_n (const bl_design *d);          /* rows used */
BL_API size_t bl_design_p (const bl_design *d);          /* columns of X */
BL_API const char *bl_design_label (const bl_design *d, size_t j);
BL_API int bl_design_has_intercept (const bl_design *d);
BL_API const char *bl_design_response (const bl_design *d);

/* Vectors over the rows used (length n), valid until bl_design_free. */
BL_API const double *bl_design_y (const bl_design *d);
BL_API const double *bl_design_offset (const bl_design *d);   /* NULL when there is no offset */
BL_API const double *bl_design_prior_w (const bl_design *d);  /* NULL when all weights are 1 */
BL_API const double *bl_design_varcol (const bl_design *d);   /* NULL unless opts.variance */

/* Fill rows [ROW0, ROW0 + NR) of X into OUT column-major with leading dimension LD >= NR:
   X[row0 + i, j] goes to OUT[j * LD + i].  Allocates nothing; thread-safe on a const design. */
BL_API void bl_design_fill (const bl_design *d, size_t row0, size_t nr, double *out, size_t ld);

/* The same in long double: derived terms (log, pow, ...) of designs with at most
   BL_DESIGN_LD_ROWS rows are kept in long double too, so the extended-precision solver gets
   them without a double rounding; larger designs widen the doubles. */
#define BL_DESIGN_LD_ROWS 250000
BL_API void bl_design_fill_ld (const bl_design *d, size_t row0, size_t nr, long double *out,
                               size_t ld);

/* A design over the M rows SEL[0..M-1] of D (indices into D's used rows, in the order given):
   same columns, labels and levels (no re-coding, so coefficients mean the same), with its own
   copies of y, offset, weights and derived terms.  For cross-validation folds.  D's table
   must outlive the subset; D itself need not.  NULL with BL_ENOMEM on exhaustion. */
BL_API bl_design *bl_design_subset (const bl_design *d, const size_t *sel, size_t m, bl_err *err);

/* The categorical columns the terms use, in order of first use, with the levels that have
   indicator columns (in column order) and the reference level left out: what a saved model
   needs to rebuild the same columns on new data (bl_design_levels).  Strings stay valid until
   bl_design_free. */
BL_API size_t bl_design_ncat (const bl_design *d);
BL_API const char *bl_design_cat_column (const bl_design *d, size_t i);
BL_API size_t bl_design_cat_nlevels (const bl_design *d, size_t i);
BL_API const char *bl_design_cat_level (const bl_design *d, size_t i, size_t k);
BL_API const char *bl_design_cat_reference (const bl_design *d, size_t i);

/* Row bookkeeping. */
BL_API size_t bl_design_rows_read (const bl_design *d);       /* table rows */
BL_API const bl_table *bl_design_table (const bl_design *d);  /* the table it was built from */
BL_API size_t bl_design_table_row (const bl_design *d, size_t i);  /* table row of used row i */
BL_API size_t bl_design_line (const bl_design *d, size_t i);  /* source line of used row i */
BL_API const char *bl_design_source (const bl_design *d);     /* the table's name */
BL_API size_t bl_design_ndrop (const bl_design *d);           /* number of distinct drop reasons */
/* Drop reason I: its text ("missing 'age'"), and *COUNT rows. */
BL_API const char *bl_design_drop_reason (const bl_design *d, size_t i, size_t *count);

#ifdef __cplusplus
}
#endif
#endif
