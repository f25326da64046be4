/* link.h -- link functions: identity, log, inverse, sqrt.  Each is one static const descriptor. */
#ifndef BALLAST_LINK_H
#define BALLAST_LINK_H
#include <stddef.h>
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

/* The link named NAME (NULL gives NULL), or NULL. */
BL_API const bl_link *bl_link_find (const char *name);
/* The links in table order (the order of --help and of error messages): I < count. */
BL_API size_t bl_link_count (void);
BL_API const bl_link *bl_link_at (size_t i);
/* The names of every link joined by SEP ("identity, log, ..."), written to BUF of LEN bytes
   (always NUL-terminated).  Returns the length the whole list needs, as snprintf. */
BL_API size_t bl_link_names (char *buf, size_t len, const char *sep);

#ifdef __cplusplus
}
#endif
#endif
