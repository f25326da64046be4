/* family.h -- the variance families: gaussian, poisson, gamma, inverse gaussian, negative
   binomial, Tweedie.

   A family is one static const descriptor in its own file (family_NAME.c), listed in the one
   family table of family.c; IRLS, the fit summary, the diagnostics, the comparer and the
   writers are written once against it.  Dispersion convention: phi is the dispersion of a
   row with prior weight 1, so that row i has Var(y_i) = phi V(mu_i) / a_i.  Gaussian
   phi = sigma^2, gamma phi = 1/shape, inverse gaussian phi = lambda^-1 (McCullagh & Nelder
   1989, ch. 2 and table 2.1). */
#ifndef BALLAST_FAMILY_H
#define BALLAST_FAMILY_H
#include <stddef.h>
#include "error.h"
#include "link.h"
#ifdef __cplusplus
extern "C" {
#endif

/* The descriptor is opaque: its fields are in family_impl.h (not installed), read through
   the functions below. */
typedef struct bl_family bl_family;

/* The per-row functions.  PAR is the family's shape parameter (negative binomial theta,
   Tweedie power; ignored by the others), A the row's prior weight and PHI the dispersion of a
   row with prior weight 1 (the row's own dispersion is phi / a): each call is one row, so a
   per-row phi_i is passed as it is. */
BL_API double bl_family_var (const bl_family *f, double mu, double par);             /* V(mu) */
BL_API double bl_family_dev (const bl_family *f, double y, double mu, double par);   /* d(y, mu) */
/* Log density of y (the log probability for a discrete family); PHI is ignored when the
   dispersion is fixed. */
BL_API double bl_family_logpdf (const bl_family *f, double y, double mu, double a, double phi,
                                double par);

/* Where a family's CDF has two roundings of one scale (the gamma: scale = mu phi / a, or
   mu / shape with shape = a / phi), FORM picks one, so that the comparer's discretized
   likelihood (BL_FAM_SCALE_MUL, also the prediction quantiles') and the quantile residuals
   (BL_FAM_SCALE_DIV) keep the numbers they always had, bit for bit.  The other families
   ignore it. */
typedef enum bl_family_scale { BL_FAM_SCALE_MUL = 0, BL_FAM_SCALE_DIV = 1 } bl_family_scale;

/* P(Y <= y) at (mu, a, phi, par): for a discrete family at the integer part of y (0 for
   y < 0); 0 for y <= 0 when the support is y > 0; for the Tweedie the point mass at 0
   included.  Sources in each family's file. */
BL_API double bl_family_cdf (const bl_family *f, double y, double mu, double a, double phi,
                             double par, bl_family_scale form);
/* log P(Y <= y) and log P(Y > y), each accurate to about 1e-14 relative where it is small
   (far in its tail, beyond the range of a double; family_tails.h), and the log probability
   of the interval log P(LO < Y <= HI), computed on the side of the distribution that holds
   it: above the median from the upper tails, log P = log S(lo) + log(1 - S(hi) / S(lo)),
   below it from the lower tails, across the median as 1 - F(lo) - S(hi).  LO may be
   -HUGE_VAL.  -HUGE_VAL when the interval has no mass. */
BL_API double bl_family_logcdf (const bl_family *f, double y, double mu, double a, double phi,
                                double par, bl_family_scale form);
BL_API double bl_family_logsf (const bl_family *f, double y, double mu, double a, double phi,
                               double par, bl_family_scale form);
BL_API double bl_family_log_interval (const bl_family *f, double lo, double hi, double mu,
                                      double a, double phi, double par, bl_family_scale form);
/* The PROB quantile at (mu, a, phi, par): for a discrete family the least integer k with
   P(Y <= k) >= PROB (HUGE_VAL when PROB >= 1 or no k below UINT_MAX / 2 reaches it); for a
   continuous one F^-1(PROB) (the Tweedie: 0 when PROB <= P(Y = 0)). */
BL_API double bl_family_quantile (const bl_family *f, double prob, double mu, double a, double phi,
                                  double par);
/* The upper Q quantile: the y with P(Y > y) = Q (continuous), the least integer k with
   P(Y > k) <= Q (discrete; HUGE_VAL when none below UINT_MAX / 2), computed from the upper
   tail, so that an interval end at level 1 - 1e-20 is finite and right. */
BL_API double bl_family_quantile_upper (const bl_family *f, double q, double mu, double a,
                                        double phi, double par);
/* The largest mean whose quantiles the family can compute (the poisson's: GSL counts in an
   unsigned int), HUGE_VAL when there is no such limit. */
BL_API double bl_family_quantile_mu_max (const bl_family *f);

extern BL_API const bl_family bl_family_gaussian;
extern BL_API const bl_family bl_family_poisson;
extern BL_API const bl_family bl_family_gamma;
extern BL_API const bl_family bl_family_invgauss;
/* Negative binomial NB2, Var = mu + mu^2 / theta (par = theta > 0), and Tweedie compound
   Poisson-gamma, Var = phi mu^p (par = p in (1, 2)). */
extern BL_API const bl_family bl_family_negbin;
extern BL_API const bl_family bl_family_tweedie;

/* The family named NAME, or NULL. */
BL_API const bl_family *bl_family_find (const char *name);

/* ---- The family table and the descriptor's properties.  Code outside the family modules
   asks these, never compares a family's address or name: what a family means to a fitter,
   a test or a writer is a property of its descriptor, so that adding a family touches the
   family's own file and its tests only. */

/* The families in table order (the order of --help and of error messages): I < count. */
BL_API size_t bl_family_count (void);
BL_API const bl_family *bl_family_at (size_t i);
/* The names of every family joined by SEP ("gaussian|poisson|..."), written to BUF of LEN
   bytes (always NUL-terminated).  Returns the length the whole list needs, as snprintf. */
BL_API size_t bl_family_names (char *buf, size_t len, const char *sep);

/* Properties, as a bit set (bl_family_has (f, BL_FAM_...)). */
enum {
  BL_FAM_DISCRETE = 1u << 0,    /* y is a count; the log density is a log probability */
  BL_FAM_PHI_FREE = 1u << 1,    /* the dispersion is estimated (else phi = 1) */
  BL_FAM_NORMAL = 1u << 2,      /* the normal density: with the identity link, least squares
                                   is exact and the deviance is a residual sum of squares */
  BL_FAM_ZERO_MASS = 1u << 3,   /* continuous y > 0 with a point mass at y = 0 (compare ranks
                                   it in the point-mass group) */
  BL_FAM_OVERDISP = 1u << 4,    /* phi fixed at 1 with no shape parameter: the Pearson
                                   dispersion tests it (overdispersion warning and advice) */
  BL_FAM_ZERO_GROUP = 1u << 5,  /* a level whose rows are all y = 0 has no finite log-mean
                                   estimate: refused as not estimable */
  BL_FAM_CDF_PHI_ML = 1u << 6   /* its quantile residuals take the CDF at the ML dispersion
                                   (the one its shape parameter was estimated with), not at
                                   the Pearson estimate */
};
BL_API int bl_family_has (const bl_family *f, unsigned flag);

/* The family's shape parameter, estimated by its own engine in the fitting layer. */
typedef enum bl_family_par {
  BL_FAMPAR_NONE = 0,
  BL_FAMPAR_THETA,              /* negative binomial theta, Var = mu + mu^2 / theta */
  BL_FAMPAR_POWER               /* Tweedie power p, Var = phi mu^p */
} bl_family_par;
BL_API bl_family_par bl_family_par_kind (const bl_family *f);

BL_API const char *bl_family_name (const bl_family *f);          /* "gamma" */
BL_API const char *bl_family_support (const bl_family *f);       /* "y > 0" */
BL_API const char *bl_family_par_name (const bl_family *f);      /* "theta", "power" or NULL */
BL_API const bl_link *bl_family_default_link (const bl_family *f);
BL_API int bl_family_y_ok (const bl_family *f, double y);        /* y inside the support */
BL_API int bl_family_mu_ok (const bl_family *f, double mu);      /* mu inside the mean space */
BL_API double bl_family_mustart (const bl_family *f, double y, double ybar);
/* The family in a sentence ("poisson", "the negative binomial", "Tweedie"), and the
   complement of its support for messages ("y <= 0", "y < 0"; NULL when every real y is in
   it). */
BL_API const char *bl_family_noun (const bl_family *f);
BL_API const char *bl_family_outside (const bl_family *f);
/* K when the variance function is the fixed power mu^K (gaussian 0, poisson 1, gamma 2,
   inverse gaussian 3); NAN for a family whose variance has a shape parameter. */
BL_API double bl_family_var_power (const bl_family *f);

/* Maximum-likelihood dispersion of FAM given the fitted means (the family's own hook).  Y,
   MU have length N; A (prior weights) may be NULL for all ones; DEV is the deviance sum
   a_i d_i at MU.
   - gaussian: phi = D / n (D = sum a r^2);
   - gamma: phi = 1/nu where nu solves sum a_i [log(nu a_i) - psi(nu a_i)] = D/2 (the score
     equation of the gamma log-likelihood in the shape; McCullagh & Nelder 1989, section 8.3);
   - inverse gaussian: phi = D / n;  - poisson, negative binomial: 1;
   - Tweedie: D / n (its engine, famfit.c, maximizes the series likelihood itself).
   Returns BL_OK, or BL_EDATA when D == 0 (the dispersion MLE is 0: a perfect fit), or
   BL_ENOCONV when the gamma equation cannot be solved. */
BL_API int bl_family_phi_ml (const bl_family *fam, const double *y, const double *mu,
                             const double *a, size_t n, double dev, double *phi,
                             bl_err *err);

/* Log-likelihood sum_i logpdf(y_i, mu_i, a_i, phi), summed in long double. */
BL_API double bl_family_loglik (const bl_family *fam, const double *y, const double *mu,
                                const double *a, size_t n, double phi);
/* The same for a family with a parameter. */
BL_API double bl_family_loglik_p (const bl_family *fam, const double *y, const double *mu,
                                  const double *a, size_t n, double phi, double par);

#ifdef __cplusplus
}
#endif
#endif
