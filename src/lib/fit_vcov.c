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
#include <gsl/gsl_blas.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_linalg.h>

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
 * The cluster-robust sandwich with the bias-reduced linearization, CR2 (Bell & McCaffrey
 * 2002, Survey Methodology 28, 169-181; McCaffrey & Bell 2006, Statistics in Medicine 25,
 * 4081-4098, for GLMs by their working weights; Imbens & Kolesar 2016, Review of Economics
 * and Statistics 98, 701-712, who recommend it with t on G - 1 for few clusters).  With
 * Z_c = W_c^1/2 X_c the weighted rows of cluster c, e_c = W_c^1/2 r_c (r the working
 * residuals), B = X'WX and H_cc = Z_c B^-1 Z_c' the cluster's block of the hat matrix,
 *   U_c = Z_c' (I - H_cc)^-1/2 e_c,     cov = B^-1 [ sum_c U_c U_c' ] B^-1,
 * which is unbiased under independent homoscedastic working errors (CR1's factor
 * G/(G-1) (n-1)/(n-k) is not).  (I - H_cc) is m_c x m_c; it is never formed: the identity
 * Z' f(Z K Z') = f(Z'Z K) Z' for K = B^-1 = L L' (Cholesky) gives, with the q x q matrix
 * T_c = L' (Z_c'Z_c) L = Q diag(lambda) Q' (its eigenvalues are those of H_cc, in [0, 1]),
 *   B^-1 U_c = L Q diag((1 - lambda)^-1/2) Q' L' s_c,     s_c = Z_c' e_c = sum_i w_i r_i x_i,
 * so a cluster costs O(m_c q^2 + q^3) whatever its size (q the columns not aliased).  An
 * eigenvalue within BL_CR2_ONE_TOL of 1 (a cluster that fits a direction exactly, e.g. a
 * cluster-level indicator) takes the pseudo-inverse, 0, as Pustejovsky & Tipton 2018 (J.
 * Business & Economic Statistics 36, 672-683) do; the residual has no component there.
 * With one row per cluster T_c = h_i and this is HC2.  Rows are visited cluster by
 * cluster (a counting sort of the ids), so memory is O(n + q^2).
 */
#define BL_CR2_ONE_TOL 1e-10

/* The q x q Cholesky factor L of B^-1 (the unaliased block of cov_unscaled) into L, lower
   triangle; COLS[k] the k-th unaliased column.  BL_EDATA when it is not
   positive definite. */
static int
cr2_factor (const bl_fit *f, const size_t *cols, size_t q, gsl_matrix *L, bl_err *err)
{
  for (size_t a = 0; a < q; a++)
    for (size_t b = 0; b < q; b++)
      gsl_matrix_set (L, a, b, f->cov_unscaled[cols[a] + cols[b] * f->p]);
  if (gsl_linalg_cholesky_decomp1 (L) != GSL_SUCCESS)
    return bl_fail (err, BL_EDATA, "--se cluster", "the coefficients' covariance is not "
                    "positive definite: no cluster standard errors");
  for (size_t a = 0; a < q; a++)
    for (size_t b = a + 1; b < q; b++)
      gsl_matrix_set (L, a, b, 0.0);
  return BL_OK;
}

/* The per-cluster workspace: q x q matrices and q-vectors as views of one allocation
   (alloc.h), and GSL's eigen workspace. */
typedef struct {
  size_t q;
  double *buf;
  gsl_matrix_view mv[5];
  gsl_vector_view vv[4];
  gsl_matrix *L, *Gc, *T, *LT, *Q;       /* q x q */
  gsl_vector *s, *lam, *u, *v;           /* q */
  gsl_eigen_symmv_workspace *eig;
} cr2_work;

static void
cr2_free (cr2_work *c)
{
  bl_free (c->buf);
  if (c->eig)
    gsl_eigen_symmv_free (c->eig);
}

static int
cr2_alloc (cr2_work *c, size_t q)
{
  gsl_matrix **m[5];
  gsl_vector **v[4];
  memset (c, 0, sizeof *c);
  m[0] = &c->L; m[1] = &c->Gc; m[2] = &c->T; m[3] = &c->LT; m[4] = &c->Q;
  v[0] = &c->s; v[1] = &c->lam; v[2] = &c->u; v[3] = &c->v;
  c->q = q;
  if (!(c->buf = bl_mallocn (5 * q * q + 4 * q, sizeof (double))))
    return 0;
  for (size_t k = 0; k < 5; k++) {
    c->mv[k] = gsl_matrix_view_array (c->buf + k * q * q, q, q);
    *m[k] = &c->mv[k].matrix;
  }
  for (size_t k = 0; k < 4; k++) {
    c->vv[k] = gsl_vector_view_array (c->buf + 5 * q * q + k * q, q);
    *v[k] = &c->vv[k].vector;
  }
  c->eig = gsl_eigen_symmv_alloc (q);
  return c->eig != NULL;
}

/* B^-1 U_c of one cluster into C->v, from its Gram matrix C->Gc and score C->s. */
static int
cr2_cluster (cr2_work *c, bl_err *err)
{
  /* T = L' Gc L, symmetric */
  gsl_blas_dgemm (CblasNoTrans, CblasNoTrans, 1.0, c->Gc, c->L, 0.0, c->LT);
  gsl_blas_dgemm (CblasTrans, CblasNoTrans, 1.0, c->L, c->LT, 0.0, c->T);
  if (gsl_eigen_symmv (c->T, c->lam, c->Q, c->eig) != GSL_SUCCESS)
    return bl_fail (err, BL_EDATA, "--se cluster", "the eigenvalues of a cluster's leverage "
                    "did not converge");
  gsl_blas_dgemv (CblasTrans, 1.0, c->L, c->s, 0.0, c->u);        /* L' s */
  gsl_blas_dgemv (CblasTrans, 1.0, c->Q, c->u, 0.0, c->v);        /* Q' L' s */
  for (size_t k = 0; k < c->q; k++) {
    const double lk = gsl_vector_get (c->lam, k);
    const double fk = lk < 1.0 - BL_CR2_ONE_TOL ? 1.0 / sqrt (1.0 - (lk > 0.0 ? lk : 0.0))
                                                : 0.0;
    gsl_vector_set (c->v, k, gsl_vector_get (c->v, k) * fk);
  }
  gsl_blas_dgemv (CblasNoTrans, 1.0, c->Q, c->v, 0.0, c->u);      /* Q f Q' L' s */
  gsl_blas_dgemv (CblasNoTrans, 1.0, c->L, c->u, 0.0, c->v);      /* L Q f Q' L' s */
  return BL_OK;
}

int
bl_fit_sandwich_cluster (bl_fit *f, const bl_table *t, const char *col, bl_err *err)
{
  const size_t n = f->n, p = f->p;
  size_t *id = bl_mallocn (n ? n : 1, sizeof *id), G, q = 0;
  size_t *start = NULL, *rows = NULL, *cols = bl_mallocn (p ? p : 1, sizeof *cols);
  double *x = bl_mallocn (p ? p : 1, sizeof (double));
  long double *S = NULL;
  cr2_work c;
  int st = BL_OK, have_work = 0;
  if (!id || !x || !cols) {
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
  for (size_t j = 0; j < p; j++)
    if (!f->aliased[j])
      cols[q++] = j;
  start = bl_calloc (G + 1, sizeof *start);
  rows = bl_mallocn (n, sizeof *rows);
  S = bl_calloc (q ? q * q : 1, sizeof *S);
  if (!start || !rows || !S) {
    st = bl_fail (err, BL_ENOMEM, "sandwich", "out of memory");
    goto done;
  }
  /* rows by cluster, in row order within each (a counting sort) */
  for (size_t i = 0; i < n; i++)
    start[id[i] + 1]++;
  for (size_t g = 0; g < G; g++)
    start[g + 1] += start[g];
  for (size_t i = 0; i < n; i++)
    rows[start[id[i]]++] = i;
  for (size_t g = G; g > 0; g--)
    start[g] = start[g - 1];
  start[0] = 0;
  if (q > 0) {
    have_work = 1;
    if (!cr2_alloc (&c, q)) {
      st = bl_fail (err, BL_ENOMEM, "sandwich", "out of memory");
      goto done;
    }
    if ((st = cr2_factor (f, cols, q, c.L, err)) != BL_OK)
      goto done;
  }
  for (size_t g = 0; g < G && q > 0; g++) {
    gsl_matrix_set_zero (c.Gc);
    gsl_vector_set_zero (c.s);
    for (size_t r = start[g]; r < start[g + 1]; r++) {
      const size_t row = rows[r];
      const double dmu = f->link->dmu_deta (f->eta[row]);
      const double wi = f->w[row], u = wi * (f->y[row] - f->mu[row]) / dmu;   /* w_i r_i */
      bl_design_fill (f->d, row, 1, x, 1);
      for (size_t a = 0; a < q; a++) {
        const double xa = x[cols[a]];
        *gsl_vector_ptr (c.s, a) += u * xa;
        for (size_t b = 0; b < q; b++)
          *gsl_matrix_ptr (c.Gc, a, b) += wi * xa * x[cols[b]];
      }
    }
    if ((st = cr2_cluster (&c, err)) != BL_OK)
      goto done;
    for (size_t a = 0; a < q; a++)
      for (size_t b = 0; b < q; b++)
        S[a + b * q] += (long double) gsl_vector_get (c.v, a) * gsl_vector_get (c.v, b);
  }
  for (size_t j = 0; j < p * p; j++)
    f->cov[j] = NAN;
  for (size_t a = 0; a < q; a++)
    for (size_t b = 0; b < q; b++)
      f->cov[cols[a] + cols[b] * p] = (double) S[a + b * q];
  f->st.se_kind = "cluster";
  f->st.clusters = G;
  bl_fit_wald_table (f);
done:
  if (have_work)
    cr2_free (&c);
  bl_free (id);
  bl_free (x);
  bl_free (cols);
  bl_free (start);
  bl_free (rows);
  bl_free (S);
  return st;
}
