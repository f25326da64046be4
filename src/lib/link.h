/* link.h -- link functions: identity, log, inverse, sqrt.  Each is one static const descriptor. */
#ifndef BALLAST_LINK_H
#define BALLAST_LINK_H
#include "version.h"
#ifdef __cplusplus
extern "C" {
#endif

typedef struct bl_link {
  const char *name;                    /* "identity", "log", "inverse" */
  double (*g) (double mu);             /* eta = g(mu) */
  double (*ginv) (double eta);         /* mu = g^-1(eta) */
  double (*dmu_deta) (double eta);     /* d mu / d eta at eta */
  int (*valid_eta) (double eta);       /* nonzero when g^-1(eta) is defined and finite */
} bl_link;

extern BL_API const bl_link bl_link_identity;
extern BL_API const bl_link bl_link_log;
extern BL_API const bl_link bl_link_inverse;
extern BL_API const bl_link bl_link_sqrt;      /* for counts: poisson, negative binomial */

/* The link named NAME, or NULL. */
BL_API const bl_link *bl_link_find (const char *name);

#ifdef __cplusplus
}
#endif
#endif
