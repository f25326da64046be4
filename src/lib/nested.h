/* nested.h -- the likelihood-ratio test of a smaller model nested in a fitted one, on the
   same rows. */
#ifndef BALLAST_NESTED_H
#define BALLAST_NESTED_H
#include <stddef.h>
#include "design.h"
#include "error.h"
#include "fit.h"
#include "table.h"
#include "terms.h"
#ifdef __cplusplus
extern "C" {
#endif

typedef struct bl_nested {
  char terms[1024];            /* the smaller model's terms, canonical text */
  const char *form;            /* "chisq" (dispersion fixed) or "F" (dispersion estimated) */
  double stat, p;
  size_t dof, dof2;            /* dof2: the F test's denominator dof (0 for chisq) */
  double deviance_small, deviance_big;
} bl_nested;

/* Fit the model with SMALL's terms (and the intercept, offset and weights of BIG's design,
   from DOPT) to exactly BIG's rows of T, with BIG's options FO, and test it against BIG
   (McCullagh & Nelder 1989, section 4.4.3): with the dispersion fixed (poisson),
   D_small - D_big is chi-square on rank_big - rank_small degrees of freedom; with it
   estimated, F = ((D_small - D_big) / dof) / phi_big, phi_big the larger model's Pearson
   dispersion, on (dof, n - rank_big).  When the family's parameter (negative binomial theta,
   Tweedie power) is estimated in each model, the deviances are at different parameter
   values, so the statistic is the likelihood ratio 2 (l_big - l_small), chi-square on the
   rank difference.
   Errors: BL_ESPEC when the smaller model is not nested (a column of it is not a column of
   BIG, or its rank is not smaller), BL_EDATA when it cannot be fitted on BIG's rows,
   BL_ENOCONV, BL_ENOMEM. */
BL_API int bl_nested_test (const bl_fit *big, const bl_table *t, const bl_terms *small,
                           const bl_design_opts *dopt, const bl_fit_opts *fo, bl_nested *out,
                           bl_err *err);

#ifdef __cplusplus
}
#endif
#endif
