/* model_impl.h -- what the saved-model files share (internal, not installed): the struct of
   a model read back (filled and checked by model_read.c, used by predict.c) and the name in
   a model file's "format" key (model_write.c writes it, model_read.c requires it). */
#ifndef BALLAST_MODEL_IMPL_H
#define BALLAST_MODEL_IMPL_H
#include <stddef.h>
#include "design.h"
#include "family.h"
#include "fit.h"
#include "link.h"
#include "model.h"
#include "terms.h"

#define BL_MODEL_FORMAT_NAME "ballast-model"

/* One categorical column of the fit with its levels in the fit's order. */
typedef struct bl_model_cat {
  char *column, *reference;
  char **levels;
  size_t nlevels;
} bl_model_cat;

/* A model file read back and checked (model_read.c); every field is valid once
   bl_model_read has returned it, and constant afterwards. */
struct bl_model {
  char *path;
  int version;
  char *response, *weights, *var_col;
  int intercept;
  bl_terms *terms, *offset;
  bl_model_cat *cat;
  size_t ncat;
  bl_design_levels *dl;           /* the same, as design options */
  const char **catnames;          /* for bl_model_table_opts */
  size_t p;
  char **labels;
  double *beta, *cov;             /* beta NAN when aliased; cov p x p column-major */
  bl_method method;
  const bl_family *fam;
  const bl_link *link;
  bl_variance var_kind;
  double power;
  bl_transform tr;
  double lambda, shift;
  size_t smear_n, nres;           /* residuals in the fit, and kept */
  size_t smear_stride;            /* every smear_stride-th residual was kept */
  double *res;
  double smear_mean_exp, smear_mean, smear_mean_sq, smear_min;
  double phi_used, phi_pearson, phi_ml, level;
  double fam_par;                 /* negative binomial theta, Tweedie power */
  size_t n, rank, dof_resid, dof_wald;   /* dof_wald: the t reference of the intervals */
  int wald_is_t;
  char *se_kind;                  /* "model", "pearson", "hc0" ... "cluster" */
};

/* Tolerances of the checks of a model file's covariance V (model_check.c,
   doc/model-format.md): symmetry |Vjk - Vkj| <= BL_MODEL_SYM_TOL max|V|; positive
   semi-definite: R + BL_MODEL_PSD_TOL q I has a Cholesky factor, R the correlation form of
   the q x q block of estimated coefficients with a nonzero variance, so that R's least
   eigenvalue is above -BL_MODEL_PSD_TOL q (q bounds R's largest eigenvalue). */
#define BL_MODEL_SYM_TOL 1e-12
#define BL_MODEL_PSD_TOL 1e-10
/* Relative slack of the smearing summaries' inequalities (mean_sq >= mean^2, mean_exp >=
   exp(mean), min <= mean): they are sums in long double rounded to double once. */
#define BL_MODEL_SMEAR_TOL 1e-12

/* The checks across keys of a model M whose every key has been read and type-checked
   (model_read.c): the column labels, the categorical levels, the parameters' ranges, the
   covariance (symmetric and positive semi-definite within the tolerances above), the counts
   and the smearing summaries, each documented in doc/model-format.md.  BL_OK, or BL_EDATA
   with where = the file and the message naming the key by its JSON path ('cov[2][1]',
   'categorical[0].levels[3]'), or BL_ENOMEM. */
int bl_model_check (const bl_model *m, bl_err *err);

#endif
