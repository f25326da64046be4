/* fit_vcov.c -- heteroscedasticity-consistent (sandwich) covariance for every method.

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
#include "fit_engine.h"
#include "order.h"
#include "rowblock.h"

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
  BL_ROWBLOCK_FOR (rb, 0, n, BLOCK) {
    const size_t r0 = rb.row0, nb = rb.n;
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

/* A cluster id for each used row: the level code of a categorical column, or the rank of
   the value among the distinct values of a numeric one.  Returns the number of clusters, or
   0 with ERR set. */
static size_t
cluster_ids (const bl_fit *f, const bl_table *t, const char *col, size_t *id, bl_err *err)
{
  const long j = col ? bl_table_find (t, col) : -1;
  const size_t n = f->n;
  if (j < 0) {
    bl_fail (err, BL_ESPEC, "--cluster", col ? "no column '%s' in the data" : "%s",
             col ? col : "cluster standard errors need --cluster COL");
    return 0;
  }
  if (bl_table_codes (t, (size_t) j)) {
    const int32_t *codes = bl_table_codes (t, (size_t) j);
    const size_t L = bl_table_nlevels (t, (size_t) j);
    size_t *map = bl_mallocn (L ? L : 1, sizeof *map), G = 0;
    if (!map) {
      bl_fail (err, BL_ENOMEM, "sandwich", "out of memory");
      return 0;
    }
    for (size_t k = 0; k < L; k++)
      map[k] = (size_t) -1;
    for (size_t i = 0; i < n; i++) {
      const int32_t cd = codes[bl_design_table_row (f->d, i)];
      if (cd < 0) {
        char where[1100];
        snprintf (where, sizeof where, "%s:%zu", bl_table_source (t), bl_design_line (f->d, i));
        bl_free (map);
        bl_fail (err, BL_EDATA, where, "the cluster column '%s' is missing on a row the model "
                 "uses", col);
        return 0;
      }
      if (map[cd] == (size_t) -1)
        map[cd] = G++;
      id[i] = map[cd];
    }
    bl_free (map);
    return G;
  } else {
    const double *x = bl_table_num (t, (size_t) j);
    double *v = bl_mallocn (n ? n : 1, sizeof *v);
    size_t *ord = bl_mallocn (n ? n : 1, sizeof *ord), G = 0;
    if (!v || !ord) {
      bl_free (v);
      bl_free (ord);
      bl_fail (err, BL_ENOMEM, "sandwich", "out of memory");
      return 0;
    }
    for (size_t i = 0; i < n; i++) {
      v[i] = x[bl_design_table_row (f->d, i)];
      if (isnan (v[i])) {
        char where[1100];
        snprintf (where, sizeof where, "%s:%zu", bl_table_source (t), bl_design_line (f->d, i));
        bl_free (v);
        bl_free (ord);
        bl_fail (err, BL_EDATA, where, "the cluster column '%s' is missing on a row the model "
                 "uses", col);
        return 0;
      }
    }
    if (bl_order_by (v, n, ord, err) != BL_OK) {
      bl_free (v);
      bl_free (ord);
      return 0;
    }
    for (size_t k = 0; k < n; k++) {
      if (k > 0 && v[ord[k]] != v[ord[k - 1]])
        G++;
      id[ord[k]] = G;
    }
    bl_free (v);
    bl_free (ord);
    return n ? G + 1 : 0;
  }
}

/*
 * The cluster-robust sandwich (Liang & Zeger 1986, Biometrika 73, 13-22): with the score of
 * row i, u_i = w_i r_i x_i (working residual r, working weight w), summed within each
 * cluster c, U_c = sum_{i in c} u_i,
 *   cov = B^-1 [ sum_c U_c U_c' ] B^-1 * G/(G-1) * (n-1)/(n-k),
 * with B = X'WX, G clusters and k = rank (the usual small-sample factor; e.g. Cameron &
 * Miller 2015, J. Human Resources 50, 317-372, section IIC, from memory).  B^-1 U_c is
 * accumulated as sum of g_i = B^-1 x_i u_i, so each row costs O(p^2).
 */
int
bl_fit_sandwich_cluster (bl_fit *f, const bl_table *t, const char *col, bl_err *err)
{
  const size_t n = f->n, p = f->p;
  const double *Cu = f->cov_unscaled;
  size_t *id = bl_mallocn (n ? n : 1, sizeof *id), G;
  double *X = bl_mallocn (BLOCK * p, sizeof (double));
  long double *Uc = NULL, *S = NULL;
  double fac;
  int st = BL_OK;
  if (!id || !X) {
    st = bl_fail (err, BL_ENOMEM, "sandwich", "out of memory");
    goto done;
  }
  G = cluster_ids (f, t, col, id, err);
  if (G == 0) {
    st = err ? err->code : BL_EDATA;
    goto done;
  }
  if (G < 2) {
    st = bl_fail (err, BL_EDATA, "--cluster", "'%s' has one cluster: cluster standard errors "
                  "need at least two", col);
    goto done;
  }
  Uc = bl_calloc (G * p, sizeof *Uc);
  S = bl_calloc (p * p, sizeof *S);
  if (!Uc || !S) {
    st = bl_fail (err, BL_ENOMEM, "sandwich", "out of memory");
    goto done;
  }
  BL_ROWBLOCK_FOR (rb, 0, n, BLOCK) {
    const size_t r0 = rb.row0, nb = rb.n;
    bl_design_fill (f->d, r0, nb, X, BLOCK);
    for (size_t i = 0; i < nb; i++) {
      const size_t row = r0 + i;
      const double dmu = f->link->dmu_deta (f->eta[row]);
      const double u = f->w[row] * (f->y[row] - f->mu[row]) / dmu;
      for (size_t j = 0; j < p; j++) {
        double s = 0.0;
        if (!f->aliased[j])
          for (size_t k = 0; k < p; k++)
            if (!f->aliased[k])
              s += Cu[j + k * p] * X[i + k * BLOCK];
        Uc[id[row] * p + j] += u * s;
      }
    }
  }
  for (size_t c = 0; c < G; c++)
    for (size_t k = 0; k < p; k++)
      for (size_t j = 0; j < p; j++)
        S[j + k * p] += Uc[c * p + j] * Uc[c * p + k];
  fac = (double) G / (double) (G - 1) * (double) (n - 1)
        / (double) (n > f->st.rank ? n - f->st.rank : 1);
  for (size_t j = 0; j < p * p; j++)
    f->cov[j] = (double) S[j] * fac;
  for (size_t j = 0; j < p; j++)
    for (size_t k = 0; k < p; k++)
      if (f->aliased[j] || f->aliased[k])
        f->cov[j + k * p] = NAN;
  f->st.se_kind = "cluster";
  f->st.clusters = G;
  bl_fit_wald_table (f);
done:
  bl_free (id);
  bl_free (X);
  bl_free (Uc);
  bl_free (S);
  return st;
}
