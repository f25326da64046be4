/* vcov.c -- heteroscedasticity-consistent (sandwich) covariance for every method.

   With B = X'WX (W the working weights at the fit, prior weights included), the working
   residual r_i = (y_i - mu_i) / (dmu/deta)_i and the leverage h_i = w_i x_i' B^-1 x_i:
     cov = B^-1 [ sum_i c_i (w_i r_i)^2 x_i x_i' ] B^-1,
     c_i = 1 (HC0), n / (n - rank) (HC1), 1 / (1 - h_i) (HC2), 1 / (1 - h_i)^2 (HC3)
   (White 1980, Econometrica 48, 817-838; MacKinnon & White 1985, J. Econometrics 29,
   305-325; for GLMs, the score of row i is x_i w_i r_i / phi, so the dispersion cancels).
   B^-1 x_i is formed from the stored (X'WX)^-1, so each row costs O(p^2) and the whole
   O(n p^2); x_i comes from the design in row blocks. */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "alloc.h"
#include "fit_impl.h"

#define BLOCK 1024

int
bl_fit_sandwich (bl_fit *f, bl_se_kind kind, bl_err *err)
{
  const size_t n = f->n, p = f->p;
  const double *Cu = f->cov_unscaled;
  double *X = bl_mallocn (BLOCK * p, sizeof (double));
  double *g = bl_mallocn (p, sizeof (double));
  long double *S = bl_calloc (p * p, sizeof (long double));
  double hc1 = 1.0;
  if (!X || !g || !S) {
    bl_free (X);
    bl_free (g);
    bl_free (S);
    return bl_fail (err, BL_ENOMEM, "sandwich", "out of memory");
  }
  if (kind == BL_SE_HC1)
    hc1 = f->st.dof_resid > 0 ? (double) n / (double) f->st.dof_resid : NAN;
  for (size_t r0 = 0; r0 < n; r0 += BLOCK) {
    const size_t nb = n - r0 < BLOCK ? n - r0 : BLOCK;
    bl_design_fill (f->d, r0, nb, X, BLOCK);
    for (size_t i = 0; i < nb; i++) {
      const size_t row = r0 + i;
      const double dmu = f->link->dmu_deta (f->eta[row]);
      const double u = f->w[row] * (f->y[row] - f->mu[row]) / dmu;   /* w_i r_i */
      double h = 0.0, c;
      for (size_t j = 0; j < p; j++) {
        double s = 0.0;
        if (!f->aliased[j])
          for (size_t k = 0; k < p; k++)
            if (!f->aliased[k])
              s += Cu[j + k * p] * X[i + k * BLOCK];
        g[j] = s;
        h += X[i + j * BLOCK] * s;
      }
      h *= f->w[row];
      switch (kind) {
      case BL_SE_HC2: c = 1.0 / (1.0 - h); break;
      case BL_SE_HC3: c = 1.0 / ((1.0 - h) * (1.0 - h)); break;
      case BL_SE_HC1: c = hc1; break;
      default: c = 1.0; break;
      }
      if ((kind == BL_SE_HC2 || kind == BL_SE_HC3) && !(h < 1.0 - 1e-10)) {
        char where[1100];
        snprintf (where, sizeof where, "%s:%zu", bl_design_source (f->d),
                  bl_design_line (f->d, row));
        bl_free (X);
        bl_free (g);
        bl_free (S);
        return bl_fail (err, BL_EDATA, where, "leverage 1 (the row fits itself exactly): %s "
                        "standard errors do not exist; use hc0 or hc1",
                        bl_se_kind_name (kind));
      }
      c *= u * u;
      for (size_t k = 0; k < p; k++)
        for (size_t j = 0; j < p; j++)
          S[j + k * p] += c * g[j] * g[k];
    }
  }
  for (size_t j = 0; j < p * p; j++)
    f->cov[j] = (double) S[j];
  for (size_t j = 0; j < p; j++)
    for (size_t k = 0; k < p; k++)
      if (f->aliased[j] || f->aliased[k])
        f->cov[j + k * p] = NAN;
  bl_free (X);
  bl_free (g);
  bl_free (S);
  f->st.se_kind = bl_se_kind_name (kind);
  bl_fit_wald_table (f);
  return BL_OK;
}
