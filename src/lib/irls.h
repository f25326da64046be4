/* irls.h -- iteratively reweighted least squares for the GLM families.

   The engine streams X block by block from a fill function (a bl_design, or the intercept
   column of a null model), forms eta, mu, the working weights and response in the same pass,
   and folds the weighted rows into the least-squares core (lsq.h).  Everything it touches is
   allocated once by bl_irls_work_new; bl_irls_iterate allocates nothing. */
#ifndef BALLAST_IRLS_H
#define BALLAST_IRLS_H
#include <signal.h>
#include <stddef.h>
#include "error.h"
#include "family.h"
#include "link.h"
#include "fit.h"                  /* bl_irls_opts, BL_IRLS_... */
#include "lsq.h"
#ifdef __cplusplus
extern "C" {
#endif

/* Fill rows [row0, row0 + nr) of X column-major into out (leading dimension ld). */
typedef void (*bl_fill_fn) (const void *ctx, size_t row0, size_t nr, double *out, size_t ld);
/* The same in long double, with every derived term (powers, logs) evaluated in long double:
   the extended kernel uses it, so that a term such as pow(x,10) is not first rounded to
   double (on Filip that rounding alone limits the LRE to about 7). */
typedef void (*bl_fill_ld_fn) (const void *ctx, size_t row0, size_t nr, long double *out,
                        size_t ld);

typedef struct bl_irls_model {
  const bl_family *fam;
  const bl_link *link;
  size_t n, p;
  const double *y;           /* length n */
  const double *offset;      /* length n, or NULL */
  const double *prior_w;     /* length n, or NULL for all ones */
  bl_fill_fn fill;
  bl_fill_ld_fn fill_ld;     /* may be NULL: fill's doubles are widened */
  const void *ctx;
  int intercept;             /* nonzero: column 0 is the constant 1 */
  double fam_par;            /* the family's parameter (negative binomial theta, Tweedie p) */
  /* For messages, may be NULL: the data's name, and the source line of row I (so that a
     failure names "FILE:LINE" rather than a row index). */
  const char *source;
  size_t (*line) (const void *ctx, size_t i);
} bl_irls_model;


typedef struct bl_irls_work bl_irls_work;

/* Allocate a workspace for MODEL's sizes and solver choice (OPT->solver, resolved from n and p
   when AUTO).  NULL with ERR = BL_ENOMEM on exhaustion. */
bl_irls_work *bl_irls_work_new (const bl_irls_model *model, const bl_irls_opts *opt,
                                bl_err *err);
void bl_irls_work_free (bl_irls_work *ws);

/* INITIALIZE: starting means from y, the first weighted solve.  BL_OK or an error
   (BL_EDATA: the starting means are outside the mean space; BL_ECANCEL). */
int bl_irls_init (bl_irls_work *ws, bl_err *err);
/* ITERATE: one step: the linear predictor at the proposed coefficients, step halving while the
   deviance rises or mu leaves the mean space, then the next weighted solve.  BL_OK, or
   BL_ENOCONV (diverged: halving could not find a valid step), BL_ECANCEL. */
int bl_irls_iterate (bl_irls_work *ws, bl_err *err);
/* TEST: BL_OK when |D_old - D| <= epsrel (|D| + 0.1), else BL_CONTINUE. */
int bl_irls_test (const bl_irls_work *ws);
/* Finish after a successful TEST: one more pass at the last solve's coefficients so that the
   reported coefficients, means, deviance and covariance factor all belong to one point. */
int bl_irls_finish (bl_irls_work *ws, bl_err *err);

/* Run INITIALIZE, ITERATE/TEST up to max_iter, and FINISH.  Converged when the deviance
   test holds and every coefficient's last step is at most BL_IRLS_EPSBETA_RATIO epsrel
   (|beta_j| + se_j), or has stopped shrinking.  Every step, the finishing move included,
   counts against max_iter: BL_ENOCONV when the limit is reached ("no convergence in N
   iterations"). */
int bl_irls_run (bl_irls_work *ws, bl_err *err);

/* Nonzero when the fit ended pressed against the edge of the parameter space: the final
   scoring step left the mean space or the link's range, or the last steps had to be halved
   back inside it (after BL_OK or BL_ENOCONV of bl_irls_run).  *ROW (may be NULL) is the row
   (0-based) where it left last; *ETA_INVALID is 1 when the linear predictor left the link's
   range there, 0 when the mean left the family's mean space. */
int bl_irls_boundary (const bl_irls_work *ws, size_t *row, int *eta_invalid);

/* Results, valid until the next call on WS or bl_irls_work_free. */
const double *bl_irls_beta (const bl_irls_work *ws);      /* length p; aliased entries 0 */
const bl_lsq_sol *bl_irls_sol (const bl_irls_work *ws);   /* rank, aliased, cov factor */
const double *bl_irls_mu (const bl_irls_work *ws);        /* length n */
const double *bl_irls_eta (const bl_irls_work *ws);       /* length n */
double bl_irls_deviance (const bl_irls_work *ws);
size_t bl_irls_iterations (const bl_irls_work *ws);
size_t bl_irls_halvings (const bl_irls_work *ws);         /* total step halvings */
bl_solver bl_irls_solver (const bl_irls_work *ws);        /* the kernel used */

#ifdef __cplusplus
}
#endif
#endif
