/* link.c -- identity, log and inverse links (McCullagh & Nelder 1989, Generalized Linear
   Models, 2nd ed., section 2.2.2 and table 2.1). */
#include <float.h>
#include <math.h>
#include <string.h>
#include "error.h"
#include "link.h"

/* identity: eta = mu */
static double id_g (double mu) { return mu; }
static double id_ginv (double eta) { return eta; }
static double id_dmu (double eta) { (void) eta; return 1.0; }
static int id_valid (double eta) { return isfinite (eta); }

/* log: eta = log mu, mu = exp(eta), dmu/deta = exp(eta).  eta is kept where exp(eta) is a
   normal, finite double (common practice, no source: avoids mu = 0 and overflow). */
static double log_g (double mu) { return log (mu); }
static double log_ginv (double eta) { return exp (eta); }
static double log_dmu (double eta) { return exp (eta); }
static int log_valid (double eta) { return isfinite (eta) && eta < 709.0 && eta > -708.0; }

/* inverse: eta = 1/mu, mu = 1/eta, dmu/deta = -1/eta^2.  eta = 0 has no mean. */
static double inv_g (double mu) { return 1.0 / mu; }
static double inv_ginv (double eta) { return 1.0 / eta; }
static double inv_dmu (double eta) { return -1.0 / (eta * eta); }
static int inv_valid (double eta)
{
  return isfinite (eta) && fabs (eta) > 1e-150;   /* 1/eta^2 stays finite */
}

/* sqrt: eta = sqrt(mu), mu = eta^2, dmu/deta = 2 eta; eta > 0 keeps the map one to one (a
   count model's variance-stabilizing link; McCullagh & Nelder 1989, section 6.2.1, from
   memory). */
static double sqrt_g (double mu) { return sqrt (mu); }
static double sqrt_ginv (double eta) { return eta * eta; }
static double sqrt_dmu (double eta) { return 2.0 * eta; }
static int sqrt_valid (double eta) { return isfinite (eta) && eta > 0.0 && eta < 1e150; }

const bl_link bl_link_identity = { "identity", id_g, id_ginv, id_dmu, id_valid };
const bl_link bl_link_log = { "log", log_g, log_ginv, log_dmu, log_valid };
const bl_link bl_link_inverse = { "inverse", inv_g, inv_ginv, inv_dmu, inv_valid };
const bl_link bl_link_sqrt = { "sqrt", sqrt_g, sqrt_ginv, sqrt_dmu, sqrt_valid };

/* Every link, in the order of --help and of error messages. */
static const bl_link *const all_links[] = { &bl_link_identity, &bl_link_log, &bl_link_inverse,
                                            &bl_link_sqrt };
#define NLINKS (sizeof all_links / sizeof all_links[0])

size_t bl_link_count (void) { return NLINKS; }
const bl_link *bl_link_at (size_t i) { return i < NLINKS ? all_links[i] : NULL; }

const bl_link *
bl_link_find (const char *name)
{
  for (size_t i = 0; name && i < NLINKS; i++)
    if (strcmp (all_links[i]->name, name) == 0)
      return all_links[i];
  return NULL;
}

size_t
bl_link_names (char *buf, size_t len, const char *sep)
{
  const char *names[NLINKS];
  for (size_t i = 0; i < NLINKS; i++)
    names[i] = all_links[i]->name;
  return bl_join_names (buf, len, sep, names, NLINKS);
}
