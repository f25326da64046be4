/* family.h -- GLM variance families: gaussian, poisson, gamma, inverse gaussian.

   A family is one static const descriptor; IRLS and the fit summary are written once against
   it.  Dispersion convention: phi is the dispersion of a row with prior weight 1, so that row i
   has Var(y_i) = phi V(mu_i) / a_i.  Gaussian phi = sigma^2, gamma phi = 1/shape, inverse
   gaussian phi = lambda^-1 (McCullagh & Nelder 1989, ch. 2 and table 2.1). */
#ifndef BALLAST_FAMILY_H
#define BALLAST_FAMILY_H
#include <stddef.h>
#include "error.h"
#include "link.h"
#ifdef __cplusplus
extern "C" {
#endif

typedef struct bl_family {
  const char *name;                       /* "gaussian", "poisson", "gamma", "inverse-gaussian" */
  double (*var) (double mu);              /* V(mu) */
  double (*unit_dev) (double y, double mu);   /* d(y, mu); D = sum a_i d_i */
  int (*valid_mu) (double mu);            /* mu inside the family's mean space */
  int (*y_ok) (double y);                 /* y inside the support */
  const char *support;                    /* "any real y", "y >= 0", "y > 0" */
  int phi_free;                           /* 1: dispersion estimated; 0: phi = 1 */
  int discrete;                           /* 1: y is a count */
  const bl_link *default_link;
  /* Log density of y at mean mu with prior weight a and dispersion phi (ignored when the
     dispersion is fixed).  For the discrete family, the log probability (lgamma form). */
  double (*logpdf) (double y, double mu, double a, double phi);
  /* A starting mean from y (and the weighted mean ybar) that lies in the mean space. */
  double (*mustart) (double y, double ybar);
  /* Families with a shape parameter PAR (negative binomial: theta; Tweedie: the power p)
     give these instead of var, unit_dev and logpdf (which are then NULL); use the
     bl_family_var / _dev / _logpdf wrappers below, which serve both kinds. */
  double (*var_p) (double mu, double par);
  double (*dev_p) (double y, double mu, double par);
  double (*logpdf_p) (double y, double mu, double a, double phi, double par);
  const char *par_name;                   /* "theta", "power"; NULL without a parameter */
} bl_family;

static inline double
bl_family_var (const bl_family *f, double mu, double par)
{
  return f->var_p ? f->var_p (mu, par) : f->var (mu);
}
static inline double
bl_family_dev (const bl_family *f, double y, double mu, double par)
{
  return f->dev_p ? f->dev_p (y, mu, par) : f->unit_dev (y, mu);
}
static inline double
bl_family_logpdf (const bl_family *f, double y, double mu, double a, double phi, double par)
{
  return f->logpdf_p ? f->logpdf_p (y, mu, a, phi, par) : f->logpdf (y, mu, a, phi);
}

extern const bl_family bl_family_gaussian;
extern const bl_family bl_family_poisson;
extern const bl_family bl_family_gamma;
extern const bl_family bl_family_invgauss;
/* Negative binomial NB2, Var = mu + mu^2 / theta (par = theta > 0), and Tweedie compound
   Poisson-gamma, Var = phi mu^p (par = p in (1, 2)). */
extern const bl_family bl_family_negbin;
extern const bl_family bl_family_tweedie;

/* The family named NAME, or NULL. */
const bl_family *bl_family_find (const char *name);

/* Maximum-likelihood dispersion of FAM given the fitted means.  Y, MU have length N; A (prior
   weights) may be NULL for all ones; DEV is the deviance sum a_i d_i at MU.
   - gaussian: phi = D / n (D = sum a r^2);
   - gamma: phi = 1/nu where nu solves sum a_i [log(nu a_i) - psi(nu a_i)] = D/2 (the score
     equation of the gamma log-likelihood in the shape; McCullagh & Nelder 1989, section 8.3);
   - inverse gaussian: phi = D / n;  - poisson: 1.
   Returns BL_OK, or BL_EDATA when D == 0 (the dispersion MLE is 0: a perfect fit), or
   BL_ENOCONV when the gamma equation cannot be solved. */
int bl_family_phi_ml (const bl_family *fam, const double *y, const double *mu, const double *a,
                      size_t n, double dev, double *phi, bl_err *err);

/* Log-likelihood sum_i logpdf(y_i, mu_i, a_i, phi), summed in long double. */
double bl_family_loglik (const bl_family *fam, const double *y, const double *mu,
                         const double *a, size_t n, double phi);
/* The same for a family with a parameter. */
double bl_family_loglik_p (const bl_family *fam, const double *y, const double *mu,
                           const double *a, size_t n, double phi, double par);

#ifdef __cplusplus
}
#endif
#endif
