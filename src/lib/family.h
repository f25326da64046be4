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
  unsigned flags;                         /* BL_FAM_... */
  int par_kind;                           /* bl_family_par */
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

/* ---- The family table and the descriptor's properties.  Code outside the family modules
   asks these, never compares a family's address or name: what a family means to a fitter,
   a test or a writer is a property of its descriptor, so that adding a family touches the
   family's own file and its tests only. */

/* The families in table order (the order of --help and of error messages): I < count. */
size_t bl_family_count (void);
const bl_family *bl_family_at (size_t i);
/* The names of every family joined by SEP ("gaussian|poisson|..."), written to BUF of LEN
   bytes (always NUL-terminated).  Returns the length the whole list needs, as snprintf. */
size_t bl_family_names (char *buf, size_t len, const char *sep);

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
  BL_FAM_ZERO_GROUP = 1u << 5   /* a level whose rows are all y = 0 has no finite log-mean
                                   estimate: refused as not estimable */
};
int bl_family_has (const bl_family *f, unsigned flag);

/* The family's shape parameter, estimated by its own engine in the fitting layer. */
typedef enum bl_family_par {
  BL_FAMPAR_NONE = 0,
  BL_FAMPAR_THETA,              /* negative binomial theta, Var = mu + mu^2 / theta */
  BL_FAMPAR_POWER               /* Tweedie power p, Var = phi mu^p */
} bl_family_par;
bl_family_par bl_family_par_kind (const bl_family *f);

const char *bl_family_name (const bl_family *f);          /* "gamma" */
const char *bl_family_support (const bl_family *f);       /* "y > 0" */
const char *bl_family_par_name (const bl_family *f);      /* "theta", "power" or NULL */
const bl_link *bl_family_default_link (const bl_family *f);
int bl_family_y_ok (const bl_family *f, double y);        /* y inside the support */
int bl_family_mu_ok (const bl_family *f, double mu);      /* mu inside the mean space */
double bl_family_mustart (const bl_family *f, double y, double ybar);

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
