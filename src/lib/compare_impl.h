/* compare_impl.h -- the inside of bl_compare, shared by compare.c (candidates, fitting,
   scoring, ranking, advice) and compare_cv.c (cross-validation).  Not installed: callers
   see only compare.h. */
#ifndef BALLAST_COMPARE_IMPL_H
#define BALLAST_COMPARE_IMPL_H
#include <stddef.h>
#include "compare.h"

/* One entry of the candidate table (compare.c): how it is fitted and what it is called. */
typedef struct spec {
  const char *id;
  bl_method method;
  const bl_family *fam;
  const bl_link *link;
  bl_transform tr;
  int lambda_est;
  bl_variance var;
  const char *desc;
} spec;

struct bl_compare {
  size_t nc;
  bl_candidate c[BL_COMPARE_MAX];
  spec sp[BL_COMPARE_MAX];
  double lam[BL_COMPARE_MAX];      /* fixed lambda of an ls-bc=L candidate */
  int integer_y;
  int zero_groups;               /* y has exact zeros and non-integer values */
  int default_list;              /* the candidates are the default list */
  long winner;
  bl_warnings advice;
  size_t folds;
  unsigned long seed;
};

/* The fit options of candidate SP (lambda LAM for ls-bc=L, else NAN) into O: the caller's
   options with the candidate's method, family, link, transform and variance. */
void bl_compare_fit_opts (const bl_compare_opts *opt, const spec *sp, double lam,
                          bl_fit_opts *o);

/* Whether the caller's cancel flag (opt->fit.irls.cancel) is set. */
int bl_compare_cancelled (const bl_compare_opts *opt);

/* Cross-validation of every converged candidate of C on D, with folds from one seeded
   permutation (compare_cv.c); c->folds = 0 when there are too few rows.  BL_OK, BL_ENOMEM
   or BL_ECANCEL, with ERR filled. */
int bl_compare_cv (bl_compare *c, const bl_design *d, const bl_compare_opts *opt, bl_err *err);

#endif
