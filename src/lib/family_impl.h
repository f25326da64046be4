/* family_impl.h -- the inside of bl_family: the descriptor each family_*.c file fills, and
   the helpers they share.  Not installed: callers use the accessors of family.h.

   Every hook is a function of one row: it takes that row's own mean mu, prior weight a,
   dispersion phi (the dispersion of a row with prior weight 1, so the row's is phi / a) and
   the family's shape parameter par (ignored by the families without one).  Nothing is read
   from a fit or a global, so a per-row phi_i from a dispersion submodel is passed as it is,
   and a caller runs the hooks over a block of rows with no state between rows. */
#ifndef BALLAST_FAMILY_IMPL_H
#define BALLAST_FAMILY_IMPL_H
#include <stddef.h>
#include "error.h"
#include "link.h"

struct bl_family {
  const char *name;         /* "gaussian", "poisson", ...: the table's key (--family, JSON) */
  const char *noun;         /* the family in a sentence: "poisson", "the negative binomial" */
  const char *support;      /* "any real y", "y >= 0", "y > 0" */
  const char *outside;      /* the complement of the support, "y <= 0"; NULL when none */
  const char *par_name;     /* "theta", "power"; NULL without a shape parameter */
  const bl_link *default_link;
  unsigned flags;           /* BL_FAM_... */
  int par_kind;             /* bl_family_par */
  int phi_free;             /* = BL_FAM_PHI_FREE in flags, and */
  int discrete;             /* = BL_FAM_DISCRETE: transitional, for the callers that still
                               read the fields (family.h) */
  double var_power;         /* K when V(mu) = mu^K with K fixed (0, 1, 2, 3); else NAN */
  double quantile_mu_max;   /* the largest mean the quantile hook can serve; 0: no limit */
  int (*y_ok) (double y);                       /* y inside the support */
  int (*valid_mu) (double mu);                  /* mu inside the mean space */
  double (*mustart) (double y, double ybar);    /* a starting mean inside the mean space */
  double (*var) (double mu, double par);        /* V(mu) */
  double (*unit_dev) (double y, double mu, double par);   /* d(y, mu); D = sum a_i d_i */
  /* log f(y) at (mu, a, phi, par); the discrete families' log P(Y = y) */
  double (*logpdf) (double y, double mu, double a, double phi, double par);
  /* P(Y <= y); for the discrete families at the integer y (0 below 0).  FORM says how a
     scale is rounded where a family has two roundings (bl_family_scale, family.h). */
  double (*cdf) (double y, double mu, double a, double phi, double par, int form);
  /* log P(Y <= y) and log P(Y > y), each accurate where it is small (family_tails.h): the
     CDF's two tails in log space, with the same FORM and the same integer part as cdf */
  double (*logcdf) (double y, double mu, double a, double phi, double par, int form);
  double (*logsf) (double y, double mu, double a, double phi, double par, int form);
  /* The P quantile: the least y with P(Y <= y) >= P (discrete), F^-1(P) (continuous) */
  double (*quantile) (double prob, double mu, double a, double phi, double par);
  /* The upper Q quantile: the least y with P(Y > y) <= Q (discrete), the y with
     P(Y > y) = Q (continuous), found from the upper tail so that a small Q keeps its
     digits where 1 - Q would round */
  double (*quantile_upper) (double q, double mu, double a, double phi, double par);
  /* The maximum-likelihood dispersion from the deviance DEV (> 0) of the N rows; NULL when
     the dispersion is fixed at 1 (family.h, bl_family_phi_ml) */
  int (*phi_ml) (const double *y, const double *mu, const double *a, size_t n, double dev,
                 double *phi, bl_err *err);
  /* Optional: sum_i log f(y_i) with every a_i = 1 and one phi, when a family can take work
     out of the loop (it must equal the sum of logpdf in long double); NULL: the loop. */
  double (*loglik_unit) (const double *y, const double *mu, size_t n, double phi, double par);
};

/* ---- shared by the family files (family.c) */

#define BL_LOG_2PI 1.8378770664093454835606594728112   /* log(2 pi) */

int bl_family_y_real (double y);            /* finite y */
int bl_family_y_nonneg (double y);          /* finite y >= 0 */
int bl_family_y_pos (double y);             /* finite y > 0 */
int bl_family_mu_real (double mu);          /* finite mu */
int bl_family_mu_pos (double mu);           /* finite mu > 0 */
/* y log(y / mu), taken as 0 at y = 0 (its limit). */
double bl_family_ylogy (double y, double mu);
/* A unit deviance is >= 0 in exact arithmetic; rounding near y = mu can leave a tiny
   negative value, which is clamped (common practice, no source). */
double bl_family_clamp_dev (double d);
/* The closed-form dispersion MLE D / n of the gaussian and inverse gaussian. */
int bl_family_phi_dev_n (const double *y, const double *mu, const double *a, size_t n,
                         double dev, double *phi, bl_err *err);
/* The least integer k >= 0 with P(Y > k) <= Q, searched from K0 on the log upper tail, and
   the continuous upper quantile by bisection on log P(Y > y) from a bracket doubled up from
   Y0 > 0 (family.c). */
double bl_family_discrete_quantile_upper (const struct bl_family *f, double q, double k0,
                                          double mu, double a, double phi, double par);
double bl_family_sf_bisect (const struct bl_family *f, double q, double y0, double mu,
                            double a, double phi, double par);
/* The least integer k >= 0 with F's CDF at k >= P, searched from K0 (family.c). */
double bl_family_discrete_quantile (const struct bl_family *f, double prob, double k0,
                                    double mu, double a, double phi, double par);

#endif
