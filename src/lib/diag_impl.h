/* diag_impl.h -- the checks of diag_tests.c that bl_diag_new (diag.c) runs in turn, and the
   comparison both files sort with.  Not installed: callers see only diag.h. */
#ifndef BALLAST_DIAG_IMPL_H
#define BALLAST_DIAG_IMPL_H
#include <signal.h>
#include "diag.h"

/* qsort comparison of two doubles, ascending. */
int bl_diag_cmp_double (const void *pa, const void *pb);

/* The Breusch-Pagan, Koenker and White tests of the Pearson residuals E of F into R
   (breusch_pagan, koenker, white); a test that cannot run gets its why.  BL_OK, BL_ENOMEM,
   or BL_ECANCEL once opt->cancel is set, with ERR filled. */
int bl_diag_variance_tests (const bl_fit *f, const double *e, const bl_diag_opts *opt,
                            bl_diag_result *r, bl_err *err);

/* The variance power of F into PW; a discrete family is suggested only when INTEGER_Y.  F
   must have converged (bl_diag_new and bl_variance_power check).  BL_OK or BL_ENOMEM. */
int bl_diag_variance_power (const bl_fit *f, int integer_y, bl_power *pw, bl_err *err);

/* Lack of fit of F's Pearson residuals E into LOF (LOF->groups allocated; the caller frees
   them).  BL_OK, BL_ENOMEM, or BL_ECANCEL once CANCEL (may be NULL) is set. */
int bl_diag_lack_of_fit (const bl_fit *f, const double *e, volatile sig_atomic_t *cancel,
                         bl_lof *lof, bl_err *err);

#endif
