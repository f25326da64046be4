/* diag_tests.c -- the variance checks of a fit: the spread ratio of the Pearson residuals
   with its simulated null, the Breusch-Pagan, Koenker and White tests by auxiliary
   regressions, the variance power, lack of fit, and the Brown-Forsythe test across the
   levels of a column (see diag.h for each formula's source). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_randist.h>
#include "alloc.h"
#include "diag_impl.h"
#include "family_tails.h"
#include "irls.h"                 /* the auxiliary regressions of the variance tests */
#include "order.h"
#include "rowblock.h"

void
bl_spread_clear (bl_spread *s)
{
  if (!s)
    return;
  bl_free (s->groups);
  s->groups = NULL;
  s->ngroups = 0;
}

int
bl_spread_compute (const double *fitted, const double *r, size_t n, gsl_rng *rng, size_t reps,
                   bl_spread *out, bl_err *err)
{
  size_t G = BL_DIAG_GROUPS;
  uint32_t *grp = NULL;
  long double ss[BL_DIAG_GROUPS] = { 0 }, sf[BL_DIAG_GROUPS] = { 0 };
  double lo = HUGE_VAL, hi = 0.0, *sim = NULL;
  int st = BL_OK;
  memset (out, 0, sizeof *out);
  out->ratio = out->null95 = NAN;
  out->why = "";
  while (G > 1 && n / G < BL_DIAG_MIN_GROUP)
    G--;
  if (G < 2) {
    out->why = "fewer than 40 rows: no two groups of 20 to compare";
    return BL_OK;
  }
  grp = bl_mallocn (n, sizeof *grp);
  out->groups = bl_calloc (G, sizeof *out->groups);
  if (!grp || !out->groups) {
    st = bl_fail (err, BL_ENOMEM, "spread", "out of memory");
    goto done;
  }
  /* the groups of the fitted-value order by selection (order.h), then one pass in row order */
  if ((st = bl_order_groups (fitted, n, G, grp, err)) != BL_OK)
    goto done;
  for (size_t i = 0; i < n; i++) {
    ss[grp[i]] += (long double) r[i] * r[i];
    sf[grp[i]] += fitted[i];
  }
  out->ngroups = G;
  for (size_t g = 0; g < G; g++) {
    const size_t a = g * n / G, b = (g + 1) * n / G;
    out->groups[g].n = b - a;
    out->groups[g].fitted_mean = (double) (sf[g] / (long double) (b - a));
    out->groups[g].rms = sqrt ((double) (ss[g] / (long double) (b - a)));
    lo = out->groups[g].rms < lo ? out->groups[g].rms : lo;
    hi = out->groups[g].rms > hi ? out->groups[g].rms : hi;
  }
  out->ratio = lo > 0.0 ? hi / lo : NAN;
  if (!(lo > 0.0))
    out->why = "a group has zero residual spread";
  if (rng && reps > 0) {
    sim = bl_mallocn (reps, sizeof *sim);
    if (!sim) {
      st = bl_fail (err, BL_ENOMEM, "spread", "out of memory");
      goto done;
    }
    for (size_t k = 0; k < reps; k++) {
      double l = HUGE_VAL, h = 0.0;
      for (size_t g = 0; g < G; g++) {
        const double nn = (double) out->groups[g].n;
        const double rms = sqrt (gsl_ran_chisq (rng, nn) / nn);
        l = rms < l ? rms : l;
        h = rms > h ? rms : h;
      }
      sim[k] = h / l;
    }
    qsort (sim, reps, sizeof *sim, bl_diag_cmp_double);
    out->null95 = sim[(size_t) ceil (0.95 * (double) reps) - 1];
  }
  out->flag = isfinite (out->ratio) && out->ratio >= BL_DIAG_SPREAD_FLAG
              && (!isfinite (out->null95) || out->ratio > out->null95);
done:
  bl_free (grp);
  bl_free (sim);
  if (st != BL_OK)
    bl_spread_clear (out);
  return st;
}


/* The upper-tail p of a chi-square statistic on T->dof, from its log (family_tails.c): p as
   its double (exact through the subnormals, 0 below them) and log10 p, finite beyond. */
static void
chisq_p (bl_diag_test *t)
{
  t->log10_p = bl_tail_chisq_logQ (t->stat, (double) t->dof) / M_LN10;
  t->p = exp (t->log10_p * M_LN10);
}

/* ---------------------------------------------------------------- auxiliary regressions */

typedef struct aux_ctx {
  const bl_design *d;
  size_t p;                 /* design columns */
  size_t nx, *xcols;        /* the non-intercept design columns */
  int white;                /* add squares and cross products */
  double *tmp;              /* BL_IRLS_BLOCK x p */
  volatile sig_atomic_t *cancel;   /* the caller's cancel flag, for the IRLS runs */
} aux_ctx;

static void
aux_fill (const void *vctx, size_t row0, size_t nr, double *out, size_t ld)
{
  const aux_ctx *c = vctx;
  size_t col = 1;
  bl_design_fill (c->d, row0, nr, c->tmp, BL_IRLS_BLOCK);
  for (size_t i = 0; i < nr; i++)
    out[i] = 1.0;
  for (size_t a = 0; a < c->nx; a++, col++)
    memcpy (out + col * ld, c->tmp + c->xcols[a] * BL_IRLS_BLOCK, nr * sizeof (double));
  if (c->white)
    for (size_t a = 0; a < c->nx; a++)
      for (size_t b = a; b < c->nx; b++, col++) {
        const double *xa = c->tmp + c->xcols[a] * BL_IRLS_BLOCK;
        const double *xb = c->tmp + c->xcols[b] * BL_IRLS_BLOCK;
        for (size_t i = 0; i < nr; i++)
          out[i + col * ld] = xa[i] * xb[i];
      }
}

/* Regress T (length n) on the auxiliary columns: RSS, TSS about the mean, and the rank. */
static int
aux_regress (aux_ctx *c, const double *t, size_t n, double *rss, double *tss, size_t *rank,
             bl_err *err)
{
  const size_t q = 1 + c->nx + (c->white ? c->nx * (c->nx + 1) / 2 : 0);
  bl_irls_model m = { &bl_family_gaussian, &bl_link_identity, n, q, t, NULL, NULL, aux_fill,
                      NULL, c, 1, 0.0, NULL, NULL };
  bl_irls_opts o;
  bl_irls_work *ws;
  long double s = 0.0L, ss = 0.0L;
  int st;
  bl_irls_opts_init (&o);
  o.threads = 1;                 /* aux_fill shares one scratch block */
  o.cancel = c->cancel;          /* polled once per block: BL_ECANCEL */
  ws = bl_irls_work_new (&m, &o, err);
  if (!ws)
    return BL_ENOMEM;
  st = bl_irls_run (ws, err);
  if (st == BL_OK) {
    *rss = bl_irls_deviance (ws);
    *rank = bl_irls_sol (ws)->rank;
  }
  bl_irls_work_free (ws);
  for (size_t i = 0; i < n; i++)
    s += t[i];
  for (size_t i = 0; i < n; i++) {
    const long double dv = t[i] - s / (long double) n;
    ss += dv * dv;
  }
  *tss = (double) ss;
  return st;
}

/* Breusch & Pagan 1979 (Econometrica 47, 1287-1294): ESS / 2 of e^2 / (RSS / n) on the terms;
   Koenker 1981 (J. Econometrics 17, 107-112): n R^2 of e^2 on the terms; White 1980
   (Econometrica 48, 817-838): n R^2 of e^2 on the terms, their squares and cross products.
   dof = rank of the auxiliary regressors less the intercept; chi-square p-values. */
int
bl_diag_variance_tests (const bl_fit *f, const double *e, const bl_diag_opts *opt,
                        bl_diag_result *r, bl_err *err)
{
  const size_t n = bl_fit_n (f), p = bl_fit_p (f);
  aux_ctx c;
  double *u = bl_mallocn (n, sizeof *u);
  long double rss0 = 0.0L;
  double rss, tss;
  size_t rank;
  int st = BL_OK;
  memset (&c, 0, sizeof c);
  c.d = bl_fit_design (f);
  c.p = p;
  c.cancel = opt->cancel;
  c.xcols = bl_mallocn (p ? p : 1, sizeof *c.xcols);
  c.tmp = bl_mallocn ((size_t) BL_IRLS_BLOCK * (p ? p : 1), sizeof *c.tmp);
  if (!u || !c.xcols || !c.tmp) {
    st = bl_fail (err, BL_ENOMEM, "diagnose", "out of memory");
    goto done;
  }
  for (size_t j = 0; j < p; j++)
    if (!(bl_design_has_intercept (bl_fit_design (f)) && j == 0) && !bl_fit_aliased (f)[j])
      c.xcols[c.nx++] = j;
  for (size_t i = 0; i < n; i++)
    rss0 += (long double) e[i] * e[i];
  r->breusch_pagan.why = r->koenker.why = r->white.why = "";
  if (c.nx == 0 || !(rss0 > 0.0L)) {
    r->breusch_pagan.why = r->koenker.why = r->white.why =
      c.nx == 0 ? "the model has no terms beside the intercept" : "the residuals are all zero";
    goto done;
  }
  for (size_t i = 0; i < n; i++)
    u[i] = e[i] * e[i] / (double) (rss0 / (long double) n);
  if ((st = aux_regress (&c, u, n, &rss, &tss, &rank, err)) != BL_OK)
    goto done;
  r->breusch_pagan.done = 1;
  r->breusch_pagan.stat = 0.5 * (tss - rss);
  r->breusch_pagan.dof = rank - 1;
  chisq_p (&r->breusch_pagan);
  for (size_t i = 0; i < n; i++)
    u[i] = e[i] * e[i];
  if ((st = aux_regress (&c, u, n, &rss, &tss, &rank, err)) != BL_OK)
    goto done;
  r->koenker.done = 1;
  r->koenker.stat = tss > 0.0 ? (double) n * (1.0 - rss / tss) : 0.0;
  r->koenker.dof = rank - 1;
  chisq_p (&r->koenker);
  if (c.nx > opt->white_max_p) {
    r->white.why = "skipped: more than the documented limit of non-intercept columns (20), "
                   "which would need too many auxiliary columns";
  } else {
    c.white = 1;
    if ((st = aux_regress (&c, u, n, &rss, &tss, &rank, err)) != BL_OK)
      goto done;
    r->white.done = 1;
    r->white.stat = tss > 0.0 ? (double) n * (1.0 - rss / tss) : 0.0;
    r->white.dof = rank - 1;
    chisq_p (&r->white);
  }
done:
  bl_free (u);
  bl_free (c.xcols);
  bl_free (c.tmp);
  return st;
}

/* The variance power: groups of at least 20 rows by fitted value (at least 10 groups); the
   least-squares slope of log(mean squared raw residual) on log(mean fitted) estimates K in
   Var y = c mu^K (the log-log mean-variance plot; e.g. McCullagh & Nelder 1989, section
   12.6, from memory); groups with mean fitted <= 0 are left out and counted.  Y and MU: the
   N responses and the fitted means of the mean model chosen below. */
static int
power_from (const double *y, const double *mu, size_t n, int integer_y, bl_power *pw,
            bl_err *err)
{
  size_t G = n / BL_DIAG_MIN_GROUP, *order, m = 0;
  double gx[BL_DIAG_POWER_MAX_GROUPS], gy[BL_DIAG_POWER_MAX_GROUPS];
  if (G > BL_DIAG_POWER_MAX_GROUPS)
    G = BL_DIAG_POWER_MAX_GROUPS;
  if (G < BL_DIAG_POWER_MIN_GROUPS) {
    pw->why = "fewer than 200 rows: not 10 groups of 20";
    return BL_OK;
  }
  order = bl_mallocn (n, sizeof *order);
  if (!order)
    return bl_fail (err, BL_ENOMEM, "diagnose", "out of memory");
  if (bl_order_by (mu, n, order, err) != BL_OK) {
    bl_free (order);
    return BL_ENOMEM;
  }
  for (size_t g = 0; g < G; g++) {
    const size_t a = g * n / G, b = (g + 1) * n / G;
    long double sm = 0.0L, ss = 0.0L;
    for (size_t k = a; k < b; k++) {
      const double r = y[order[k]] - mu[order[k]];
      sm += mu[order[k]];
      ss += (long double) r * r;
    }
    sm /= (long double) (b - a);
    ss /= (long double) (b - a);
    if (!(sm > 0.0L) || !(ss > 0.0L)) {
      pw->groups_left_out++;
      continue;
    }
    gx[m] = log ((double) sm);
    gy[m] = log ((double) ss);
    m++;
  }
  bl_free (order);
  pw->groups_used = m;
  memcpy (pw->log_mean, gx, m * sizeof *gx);
  memcpy (pw->log_var, gy, m * sizeof *gy);
  if (m < 3) {
    pw->why = "fewer than 3 groups with a positive mean fitted value";
    return BL_OK;
  }
  {
    double mx = 0.0, my = 0.0, sxx = 0.0, sxy = 0.0, sse = 0.0, b, a0, t;
    for (size_t k = 0; k < m; k++) {
      mx += gx[k];
      my += gy[k];
    }
    mx /= (double) m;
    my /= (double) m;
    for (size_t k = 0; k < m; k++) {
      sxx += (gx[k] - mx) * (gx[k] - mx);
      sxy += (gx[k] - mx) * (gy[k] - my);
    }
    if (!(sxx > 0.0)) {
      pw->why = "the groups' mean fitted values do not vary";
      return BL_OK;
    }
    b = sxy / sxx;
    a0 = my - b * mx;
    for (size_t k = 0; k < m; k++) {
      const double res = gy[k] - a0 - b * gx[k];
      sse += res * res;
    }
    pw->done = 1;
    pw->estimate = b;
    pw->intercept = a0;
    pw->se = sqrt (sse / (double) (m - 2) / sxx);
    t = gsl_cdf_tdist_Qinv (0.025, (double) (m - 2));
    pw->lo = b - t * pw->se;
    pw->hi = b + t * pw->se;
  }
  /* the nearest of the families' fixed variance powers, in table order: 0 (gaussian), 1
     (poisson, a discrete family: integer y only), 2 (gamma), 3 (inverse gaussian) */
  {
    double best = HUGE_VAL;
    for (size_t k = 0; k < bl_family_count (); k++) {
      const bl_family *fam = bl_family_at (k);
      const double K = bl_family_var_power (fam);
      if (!isfinite (K) || (bl_family_has (fam, BL_FAM_DISCRETE) && !integer_y))
        continue;
      if (fabs (pw->estimate - K) < best) {
        best = fabs (pw->estimate - K);
        pw->suggested = bl_family_name (fam);
        pw->suggested_power = K;
      }
    }
    pw->suggested_outside = !(pw->lo <= pw->suggested_power && pw->suggested_power <= pw->hi);
  }
  return BL_OK;
}

/*
 * The mean model the variance power is read from.  The residuals of a mean that is wrong
 * in form carry its lack of fit into the squared residuals, and a straight-line mean of
 * positive, skewed data bends K down (gamma data, true K = 2, give 1.45 under OLS).  So for
 * y > 0 everywhere the mean is a gamma fit with the log link of the same design (terms,
 * offset, prior weights), and for counts (whole numbers >= 0) a poisson fit with the log
 * link: both keep every fitted mean positive and their estimating equations do not depend
 * on K being right (the quasi-likelihood argument: Wedderburn 1974, Biometrika 61, 439-447;
 * McCullagh & Nelder 1989, section 9.2), so the mean is consistent whatever the variance.
 * Otherwise, or when that fit does not converge, the model's own fitted means are used; the
 * choice is in pw->mean_model.
 */
int
bl_diag_variance_power (const bl_fit *f, int integer_y, bl_power *pw, bl_err *err)
{
  const bl_design *d = bl_fit_design (f);
  const size_t n = bl_design_n (d);
  const double *y = bl_design_y (d);
  int positive = n > 0, st;
  bl_fit *g = NULL;
  memset (pw, 0, sizeof *pw);
  pw->estimate = pw->se = pw->lo = pw->hi = pw->intercept = pw->suggested_power = NAN;
  pw->why = "";
  pw->suggested = NULL;
  pw->mean_model = "model";
  for (size_t i = 0; i < n && positive; i++)
    positive = y[i] > 0.0;
  if (integer_y || positive) {
    bl_fit_opts fo;
    bl_err e2 = { 0 };
    bl_fit_opts_init (&fo);
    fo.method = BL_METHOD_GLM;
    fo.fam = integer_y ? &bl_family_poisson : &bl_family_gamma;
    fo.link = &bl_link_log;
    g = bl_fit_new (d, &fo, &e2);
    if (!g && e2.code == BL_ENOMEM)
      return bl_fail (err, BL_ENOMEM, "diagnose", "out of memory");
    if (g && bl_fit_stats_get (g)->converged)
      pw->mean_model = integer_y ? "poisson/log" : "gamma/log";
    else
      pw->mean_model = integer_y ? "model (the poisson/log fit did not converge)"
                                 : "model (the gamma/log fit did not converge)";
  }
  if (g && bl_fit_stats_get (g)->converged)
    st = power_from (bl_design_y (d), bl_fit_mu (g), n, integer_y, pw, err);
  else
    st = power_from (bl_fit_y (f), bl_fit_mu (f), bl_fit_n (f), integer_y, pw, err);
  bl_fit_free (g);
  return st;
}

/* Lack of fit: Pearson residual means in bins of the fitted value and of each numeric column
   (not the intercept, not 0/1 indicators); a bin mean beyond 3 standard errors of zero is
   flagged (common practice, no source). */
int
bl_diag_lack_of_fit (const bl_fit *f, const double *e, volatile sig_atomic_t *cancel,
                     bl_lof *lof, bl_err *err)
{
  const size_t n = bl_fit_n (f), p = bl_fit_p (f);
  size_t G = BL_DIAG_LOF_GROUPS, nagainst = 1, cap;
  size_t *order = NULL;
  double *x = NULL, *blk = NULL;
  int st = BL_OK;
  memset (lof, 0, sizeof *lof);
  while (G > 1 && n / G < BL_DIAG_MIN_GROUP)
    G--;
  if (G < 2)
    return BL_OK;
  cap = G * (p + 1);
  lof->groups = bl_calloc (cap, sizeof *lof->groups);
  order = bl_mallocn (n, sizeof *order);
  x = bl_mallocn (n, sizeof *x);
  blk = bl_mallocn ((size_t) BL_IRLS_BLOCK * (p ? p : 1), sizeof *blk);
  if (!lof->groups || !order || !x || !blk) {
    st = bl_fail (err, BL_ENOMEM, "diagnose", "out of memory");
    goto done;
  }
  for (size_t a = 0; a <= p; a++) {
    const char *label = "fitted";
    if (cancel && *cancel) {           /* one sort of n rows per column: poll between them */
      st = bl_fail (err, BL_ECANCEL, "diagnose", "the diagnosis was cancelled");
      goto done;
    }
    if (a == 0) {
      memcpy (x, bl_fit_mu (f), n * sizeof *x);
    } else {
      const size_t j = a - 1;
      int binary = 1;
      if (bl_fit_aliased (f)[j] || (bl_design_has_intercept (bl_fit_design (f)) && j == 0))
        continue;
      BL_ROWBLOCK_FOR (rb, 0, n, BL_IRLS_BLOCK) {
        bl_design_fill (bl_fit_design (f), rb.row0, rb.n, blk, BL_IRLS_BLOCK);
        for (size_t i = 0; i < rb.n; i++) {
          x[rb.row0 + i] = blk[i + j * BL_IRLS_BLOCK];
          binary &= x[rb.row0 + i] == 0.0 || x[rb.row0 + i] == 1.0;
        }
      }
      if (binary)
        continue;
      label = bl_design_label (bl_fit_design (f), j);
      nagainst++;
    }
    if ((st = bl_order_by (x, n, order, err)) != BL_OK)
      goto done;
    for (size_t g = 0; g < G; g++) {
      const size_t lo = g * n / G, hi = (g + 1) * n / G, m = hi - lo;
      long double sx = 0.0L, se = 0.0L, see = 0.0L;
      bl_lof_group *grp = &lof->groups[lof->ngroups++];
      for (size_t k = lo; k < hi; k++) {
        sx += x[order[k]];
        se += e[order[k]];
      }
      for (size_t k = lo; k < hi; k++) {
        const long double dv = e[order[k]] - se / (long double) m;
        see += dv * dv;
      }
      grp->against = label;
      grp->n = m;
      grp->x_mean = (double) (sx / (long double) m);
      grp->resid_mean = (double) (se / (long double) m);
      grp->se = m > 1 ? sqrt ((double) (see / (long double) (m - 1)) / (double) m) : NAN;
      grp->flag = grp->se > 0.0 && fabs (grp->resid_mean) > BL_DIAG_LOF_Z * grp->se;
      lof->flag |= grp->flag;
    }
  }
  (void) nagainst;
done:
  bl_free (order);
  bl_free (x);
  bl_free (blk);
  return st;
}

/* ---------------------------------------------------------------- Brown-Forsythe */

void
bl_bf_clear (bl_bf *b)
{
  if (!b)
    return;
  bl_free (b->groups);
  b->groups = NULL;
  b->ngroups = 0;
}

/* Median of X[0..n-1] (sorted in place). */
static double
median_of (double *x, size_t n)
{
  qsort (x, n, sizeof *x, bl_diag_cmp_double);
  return n % 2 ? x[n / 2] : 0.5 * (x[n / 2 - 1] + x[n / 2]);
}

/* The one-way ANOVA F of z over the L levels (CNT rows each, level k's z at START[k] ..
   START[k + 1] - 1; G levels with rows, N rows, ZBAR the mean z) into OUT. */
static void
bf_anova (const size_t *cnt, const size_t *start, const double *z, size_t L, size_t n,
          size_t G, long double zbar, bl_bf *out)
{
  long double between = 0.0L, within = 0.0L;
  for (size_t k = 0; k < L; k++) {
    long double m = 0.0L;
    if (!cnt[k])
      continue;
    for (size_t q = start[k]; q < start[k + 1]; q++)
      m += z[q];
    m /= (long double) cnt[k];
    between += (long double) cnt[k] * (m - zbar) * (m - zbar);
    for (size_t q = start[k]; q < start[k + 1]; q++)
      within += (z[q] - m) * (z[q] - m);
  }
  out->dof = G - 1;
  out->dof2 = n - G;
  out->stat = within > 0.0L ? (double) ((between / (long double) (G - 1))
                                         / (within / (long double) (n - G))) : NAN;
  out->log10_p = isfinite (out->stat) ? bl_tail_f_logQ (out->stat, (double) out->dof,
                                                         (double) out->dof2) / M_LN10 : NAN;
  out->p = exp (out->log10_p * M_LN10);
}

int
bl_brown_forsythe (const bl_fit *f, const bl_table *t, const char *col, bl_bf *out,
                   bl_err *err)
{
  const size_t n = bl_fit_n (f);
  const bl_design *dsg = bl_fit_design (f);
  const long jc = bl_table_find (t, col);
  const int32_t *codes;
  size_t L, *cnt = NULL, *start = NULL, *pos = NULL, G = 0;
  double *r = NULL, *sorted = NULL, *z = NULL;
  long double zbar = 0.0L;
  int st = BL_OK;

  memset (out, 0, sizeof *out);
  out->stat = out->p = NAN;
  snprintf (out->column, sizeof out->column, "%s", col);
  if (jc < 0)
    return bl_fail (err, BL_ESPEC, "--by", "no column '%s' in %s", col, bl_table_source (t));
  codes = bl_table_codes (t, (size_t) jc);
  if (!codes)
    return bl_fail (err, BL_ESPEC, "--by", "'%s' is numeric; --by needs a categorical column "
                    "(declare it with --categorical)", col);
  L = bl_table_nlevels (t, (size_t) jc);
  cnt = bl_calloc (L ? L : 1, sizeof *cnt);
  start = bl_calloc (L + 1, sizeof *start);
  pos = bl_calloc (L ? L : 1, sizeof *pos);
  r = bl_mallocn (n ? n : 1, sizeof *r);
  sorted = bl_mallocn (n ? n : 1, sizeof *sorted);
  z = bl_mallocn (n ? n : 1, sizeof *z);
  out->groups = bl_calloc (L ? L : 1, sizeof *out->groups);
  if (!cnt || !start || !pos || !r || !sorted || !z || !out->groups) {
    st = bl_fail (err, BL_ENOMEM, "diagnose", "out of memory");
    goto done;
  }
  bl_pearson_residuals (f, r);
  for (size_t i = 0; i < n; i++) {
    const int32_t c = codes[bl_design_table_row (dsg, i)];
    if (c < 0) {
      char where[1100];
      snprintf (where, sizeof where, "%s:%zu", bl_table_source (t), bl_design_line (dsg, i));
      st = bl_fail (err, BL_EDATA, where, "--by column '%s' is missing on a row the model "
                    "uses", col);
      goto done;
    }
    cnt[c]++;
  }
  for (size_t k = 0; k < L; k++)
    start[k + 1] = start[k] + cnt[k];
  for (size_t i = 0; i < n; i++) {
    const size_t c = (size_t) codes[bl_design_table_row (dsg, i)];
    sorted[start[c] + pos[c]++] = r[i];
  }
  /* z = |r - group median|, grouped the same way */
  for (size_t k = 0; k < L; k++) {
    double med, s = 0.0;
    if (!cnt[k])
      continue;
    memcpy (z + start[k], sorted + start[k], cnt[k] * sizeof *z);
    med = median_of (z + start[k], cnt[k]);
    for (size_t q = start[k]; q < start[k + 1]; q++) {
      z[q] = fabs (sorted[q] - med);
      s += z[q];
    }
    out->groups[G].level = bl_table_level (t, (size_t) jc, k);
    out->groups[G].n = cnt[k];
    out->groups[G].median = med;
    out->groups[G].spread = s / (double) cnt[k];
    G++;
    zbar += s;
  }
  out->ngroups = G;
  if (G < 2 || n <= G) {
    st = bl_fail (err, BL_EDATA, "--by", "'%s' has %zu level%s with rows: no spread to "
                  "compare", col, G, G == 1 ? "" : "s");
    goto done;
  }
  bf_anova (cnt, start, z, L, n, G, zbar / (long double) n, out);
done:
  bl_free (cnt);
  bl_free (start);
  bl_free (pos);
  bl_free (r);
  bl_free (sorted);
  bl_free (z);
  if (st != BL_OK)
    bl_bf_clear (out);
  return st;
}
