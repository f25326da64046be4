/* irls.c -- iteratively reweighted least squares (Nelder & Wedderburn 1972, J. R. Statist.
   Soc. A 135, 370-384; Green 1984, J. R. Statist. Soc. B 46, 149-192; McCullagh & Nelder
   1989, section 2.5), streamed over row blocks and two worker threads.

   One pass over the rows at coefficients beta computes, block by block,
     eta_i = x_i' beta + offset_i,  mu_i = g^-1(eta_i),  D = sum a_i d(y_i, mu_i),
   and, when the step is to be solved,
     z_i = eta_i - offset_i + (y_i - mu_i) / (dmu/deta)_i
     w_i = a_i (dmu/deta)_i^2 / V(mu_i),
   folding the rows sqrt(w_i) [x_i' | z_i] into the least-squares factor.  The rows are cut
   into BL_IRLS_PARTS fixed partitions (a function of n only); each has its own partial factor
   and deviance sum, combined in partition order, so results are bit-identical whatever the
   number of threads. */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "alloc.h"
#include "irls.h"
#include "rowblock.h"
#include "thread.h"

typedef struct part {
  size_t row0, row1;         /* rows [row0, row1) */
  double *R;                 /* q x q partial factor (streamed kernel) */
  long double dev;           /* partial deviance */
  int bad;                   /* 0 ok, 1 eta invalid, 2 mu invalid, 3 cancelled */
  size_t bad_row;
} part;

typedef struct pass_arg {
  struct bl_irls_work *ws;
  const double *beta;        /* NULL: eta already in ws->eta */
  int accumulate;
  unsigned tid, nthreads;
} pass_arg;

struct bl_irls_work {
  bl_irls_model m;
  bl_irls_opts opt;
  size_t n, p, q;
  size_t ld;                 /* rows of a block buffer: BL_IRLS_BLOCK, or n when smaller */
  bl_solver solver;
  double *beta, *beta_prev, *beta_next;   /* length p */
  double *scale;             /* power-of-two column scales: X_j * scale_j has max |.| < 1 */
  double *eta, *mu;          /* length n */
  double *buf[2];            /* per-thread block buffer, BLOCK x (q + 1): X, z, sqrt(w) */
  long double *lbuf[2];      /* per-thread long double block, BLOCK x p (extended kernel) */
  double *R;                 /* q x q combined factor */
  long double *A;            /* n x q, extended kernel only */
  part *parts;
  size_t nparts;
  bl_lsq_work *lw;
  bl_lsq_sol *sol;
  double dev, dev_prev;
  size_t iter, halvings;
  /* The edge of the mean space: the number of consecutive accepted steps that were halved
     back inside it (the row and failure code of the last), and whether the fit ended
     pressed against it (bl_irls_boundary). */
  size_t edge_streak, edge_row;
  int edge_code, boundary;
  int have_prev;             /* beta_prev is a valid point to halve towards */
  int exact;                 /* gaussian identity: one solve is the answer */
  /* The second worker: started once per workspace, so that passes create no threads; each
     pass hands it one share of the partitions (thread.h, the partner). */
  int worker;                /* 1 when the partner thread runs */
  bl_partner partner;
};


void
bl_irls_opts_init (bl_irls_opts *opt)
{
  opt->epsrel = BL_IRLS_EPSREL;
  opt->max_iter = BL_IRLS_MAX_ITER;
  opt->max_halvings = BL_IRLS_MAX_HALVINGS;
  opt->rank_tol = BL_LSQ_RANK_TOL;
  opt->solver = BL_SOLVER_AUTO;
  opt->threads = 2;
  opt->cancel = NULL;
}

static void pass_thread_run (pass_arg *pa);

/* The partner's task: the second share of a pass's partitions. */
static void
worker_task (void *arg)
{
  pass_thread_run (arg);
}

void
bl_irls_work_free (bl_irls_work *ws)
{
  if (!ws)
    return;
  if (ws->worker)
    bl_partner_stop (&ws->partner);
  bl_free (ws->beta);
  bl_free (ws->beta_prev);
  bl_free (ws->beta_next);
  bl_free (ws->scale);
  bl_free (ws->eta);
  bl_free (ws->mu);
  bl_free (ws->buf[0]);
  bl_free (ws->buf[1]);
  bl_free (ws->lbuf[0]);
  bl_free (ws->lbuf[1]);
  bl_free (ws->R);
  bl_free (ws->A);
  if (ws->parts)
    for (size_t k = 0; k < ws->nparts; k++)
      bl_free (ws->parts[k].R);
  bl_free (ws->parts);
  bl_lsq_work_free (ws->lw);
  bl_lsq_sol_free (ws->sol);
  bl_free (ws);
}

bl_irls_work *
bl_irls_work_new (const bl_irls_model *model, const bl_irls_opts *opt, bl_err *err)
{
  bl_irls_work *ws = bl_calloc (1, sizeof *ws);
  const size_t n = model->n, p = model->p, q = p + 1;
  size_t nblocks;
  int ok;
  if (!ws)
    goto nomem;
  ws->m = *model;
  ws->opt = *opt;
  if (ws->opt.threads < 1)
    ws->opt.threads = 1;
  if (ws->opt.threads > 2)
    ws->opt.threads = 2;      /* the block buffers are made for at most two workers */
  ws->n = n;
  ws->p = p;
  ws->q = q;
  ws->ld = n < BL_IRLS_BLOCK ? (n ? n : 1) : BL_IRLS_BLOCK;   /* small fits: small buffers */
  ws->solver = opt->solver;
  if (ws->solver == BL_SOLVER_AUTO)
    ws->solver = ((double) n * (double) q * (double) q <= BL_LSQ_SMALL_NQ2)
                 ? BL_SOLVER_EXTENDED : BL_SOLVER_STREAMED;
  ws->exact = (bl_family_has (model->fam, BL_FAM_NORMAL) && model->link == &bl_link_identity);
  nblocks = (n + BL_IRLS_BLOCK - 1) / BL_IRLS_BLOCK;
  ws->nparts = nblocks < BL_IRLS_PARTS ? (nblocks ? nblocks : 1) : BL_IRLS_PARTS;
  ws->beta = bl_calloc (p, sizeof (double));
  ws->beta_prev = bl_calloc (p, sizeof (double));
  ws->beta_next = bl_calloc (p, sizeof (double));
  ws->scale = bl_calloc (p, sizeof (double));
  ws->eta = bl_mallocn (n, sizeof (double));
  ws->mu = bl_mallocn (n, sizeof (double));
  ws->buf[0] = bl_mallocn (ws->ld * (q + 1), sizeof (double));
  ws->buf[1] = bl_mallocn (ws->ld * (q + 1), sizeof (double));
  ws->R = bl_mallocn (q * q, sizeof (double));
  ws->parts = bl_calloc (ws->nparts, sizeof *ws->parts);
  ws->lw = bl_lsq_work_new (p);
  ws->sol = bl_lsq_sol_new (p);
  ok = ws->beta && ws->beta_prev && ws->beta_next && ws->scale && ws->eta && ws->mu
       && ws->buf[0] && ws->buf[1] && ws->R && ws->parts && ws->lw && ws->sol;
  if (!ok)
    goto nomem;
  for (size_t k = 0; k < ws->nparts; k++) {
    const size_t b0 = k * nblocks / ws->nparts, b1 = (k + 1) * nblocks / ws->nparts;
    ws->parts[k].row0 = b0 * BL_IRLS_BLOCK;
    ws->parts[k].row1 = b1 * BL_IRLS_BLOCK < n ? b1 * BL_IRLS_BLOCK : n;
    if (ws->solver == BL_SOLVER_STREAMED) {
      ws->parts[k].R = bl_mallocn (q * q, sizeof (double));
      if (!ws->parts[k].R)
        goto nomem;
    }
  }
  if (ws->opt.threads > 1 && ws->nparts > 1) {
    /* Without a second thread the same partitions run on one: same results, slower. */
    ws->worker = bl_partner_start (&ws->partner) == 0;
  }
  if (ws->solver == BL_SOLVER_EXTENDED) {
    ws->A = bl_mallocn (n * q, sizeof (long double));
    ws->lbuf[0] = bl_mallocn (ws->ld * q, sizeof (long double));
    ws->lbuf[1] = bl_mallocn (ws->ld * q, sizeof (long double));
    if (!ws->A || !ws->lbuf[0] || !ws->lbuf[1])
      goto nomem;
  }
  return ws;
nomem:
  bl_irls_work_free (ws);
  bl_fail (err, BL_ENOMEM, "irls", "out of memory for a fit of %zu rows and %zu columns", n, p);
  return NULL;
}

#if defined(__GNUC__) && !defined(__clang__)
#define HOT __attribute__ ((optimize ("O3")))
#else
#define HOT
#endif

/* Work on one partition: eta (unless given), mu, deviance, and the weighted rows. */
HOT static void
pass_part (bl_irls_work *ws, part *pt, const double *beta, int accumulate, double *buf,
           long double *lbuf)
{
  const bl_irls_model *m = &ws->m;
  const bl_family *fam = m->fam;
  const bl_link *lnk = m->link;
  const size_t p = ws->p, q = ws->q, ld = ws->ld;
  pt->dev = 0.0L;
  pt->bad = 0;
  if (pt->R)
    memset (pt->R, 0, q * q * sizeof (double));
  BL_ROWBLOCK_FOR (rb, pt->row0, pt->row1, BL_IRLS_BLOCK) {
    const size_t r0 = rb.row0, nb = rb.n;
    double *const eta = ws->eta + r0, *const mu = ws->mu + r0, *const zc = buf + p * ld;
    double *const sw = buf + q * ld;     /* sqrt(w_i) of the block */
    long double dsum = 0.0L;
    if (ws->opt.cancel && *ws->opt.cancel) {
      pt->bad = 3;
      return;
    }
    if (lbuf) {
      /* extended kernel: X in long double, eta accumulated in long double */
      if (m->fill_ld) {
        m->fill_ld (m->ctx, r0, nb, lbuf, ld);
      } else {
        m->fill (m->ctx, r0, nb, buf, ld);
        for (size_t k = 0; k < p * ld; k++)
          lbuf[k] = buf[k];
      }
      if (beta)
        for (size_t i = 0; i < nb; i++) {
          long double e = m->offset ? m->offset[r0 + i] : 0.0;
          for (size_t j = 0; j < p; j++)
            e += lbuf[i + j * ld] * beta[j];
          eta[i] = (double) e;
        }
    } else {
      m->fill (m->ctx, r0, nb, buf, ld);
      if (beta) {
        for (size_t i = 0; i < nb; i++)
          eta[i] = m->offset ? m->offset[r0 + i] : 0.0;
        for (size_t j = 0; j < p; j++) {
          const double bj = beta[j], *const xj = buf + j * ld;
          if (bj != 0.0)
            for (size_t i = 0; i < nb; i++)
              eta[i] += xj[i] * bj;
        }
      }
    }
    for (size_t i = 0; i < nb; i++) {
      const double y = m->y[r0 + i], a = m->prior_w ? m->prior_w[r0 + i] : 1.0;
      if (!lnk->valid_eta (eta[i])) {
        pt->bad = 1;
        pt->bad_row = r0 + i;
        return;
      }
      mu[i] = lnk->ginv (eta[i]);
      if (!bl_family_mu_ok (fam, mu[i])) {
        pt->bad = 2;
        pt->bad_row = r0 + i;
        return;
      }
      dsum += a * bl_family_dev (fam, y, mu[i], m->fam_par);
      if (accumulate) {
        /* log link: dmu/deta = mu, which saves an exp per row */
        const double dmu = (lnk == &bl_link_log) ? mu[i] : lnk->dmu_deta (eta[i]);
        const double w = a * dmu * dmu / bl_family_var (fam, mu[i], m->fam_par);
        const double s = sqrt (w);
        const double off = m->offset ? m->offset[r0 + i] : 0.0;
        if (lbuf) {
          const long double sl = sqrtl ((long double) w);
          long double *const Ai = ws->A + r0 + i;
          Ai[p * ws->n] = sl * ((long double) eta[i] - off + ((long double) y - mu[i]) / dmu);
          for (size_t j = 0; j < p; j++)
            Ai[j * ws->n] = sl * lbuf[i + j * ld] * ws->scale[j];
        } else {
          zc[i] = s * (eta[i] - off + (y - mu[i]) / dmu);
          sw[i] = s;
        }
      }
    }
    pt->dev += dsum;
    if (!accumulate)
      continue;
    if (!lbuf)
      for (size_t j = 0; j < p; j++) {   /* row weights times the exact column scales */
        double *const xj = buf + j * ld;
        const double sc = ws->scale[j];
        for (size_t i = 0; i < nb; i++)
          xj[i] *= sw[i] * sc;
      }
    if (!lbuf)
      bl_lsq_fold (pt->R, q, buf, nb, ld);
  }
}

static void
pass_thread_run (pass_arg *pa)
{
  bl_irls_work *ws = pa->ws;
  for (size_t k = pa->tid; k < ws->nparts; k += pa->nthreads)
    pass_part (ws, &ws->parts[k], pa->beta, pa->accumulate, ws->buf[pa->tid],
               ws->solver == BL_SOLVER_EXTENDED ? ws->lbuf[pa->tid] : NULL);
}

/* One pass over all partitions, on one or two threads.  Returns 0, or the first partition's
   failure code (in partition order). */
static int
pass (bl_irls_work *ws, const double *beta, int accumulate, size_t *bad_row)
{
  const unsigned nt = ws->opt.threads > 1 && ws->nparts > 1 ? 2 : 1;
  pass_arg args[2];
  long double dev = 0.0L;
  for (unsigned t = 0; t < nt; t++) {
    args[t].ws = ws;
    args[t].beta = beta;
    args[t].accumulate = accumulate;
    args[t].tid = t;
    args[t].nthreads = nt;
  }
  if (nt > 1 && ws->worker) {
    bl_partner_post (&ws->partner, worker_task, &args[1]);
  } else if (nt > 1) {
    pass_thread_run (&args[1]);   /* no worker: its share here, the same partitions */
  }
  pass_thread_run (&args[0]);
  if (nt > 1 && ws->worker)
    bl_partner_wait (&ws->partner);
  for (size_t k = 0; k < ws->nparts; k++) {
    if (ws->parts[k].bad) {
      *bad_row = ws->parts[k].bad_row;
      return ws->parts[k].bad;
    }
    dev += ws->parts[k].dev;
  }
  ws->dev = (double) dev;
  if (accumulate && ws->solver == BL_SOLVER_STREAMED) {
    memset (ws->R, 0, ws->q * ws->q * sizeof (double));
    for (size_t k = 0; k < ws->nparts; k++)
      bl_lsq_fold (ws->R, ws->q, ws->parts[k].R, ws->q, ws->q);
  }
  return 0;
}

/* Solve the accumulated weighted problem into beta_next (original units). */
static int
solve (bl_irls_work *ws, bl_err *err)
{
  int st;
  if (ws->solver == BL_SOLVER_STREAMED)
    st = bl_lsq_solve_tri (ws->lw, ws->R, ws->opt.rank_tol, ws->sol, err);
  else
    st = bl_lsq_solve_full (ws->lw, ws->A, ws->n, ws->n, ws->opt.rank_tol, ws->sol, err);
  if (st != BL_OK)
    return st;
  /* undo the power-of-two column scaling: X_j s_j b'_j = X_j b_j */
  for (size_t j = 0; j < ws->p; j++) {
    ws->sol->beta[j] *= ws->scale[j];
    ws->beta_next[j] = ws->sol->beta[j];
    for (size_t k = 0; k < ws->p; k++)
      ws->sol->cov[j + k * ws->p] *= ws->scale[j] * ws->scale[k];
  }
  return BL_OK;
}

static int
pass_error (bl_irls_work *ws, int code, size_t row, bl_err *err)
{
  char where[1100];
  if (code == 3)
    return bl_fail (err, BL_ECANCEL, "irls", "the fit was cancelled");
  /* the place in the message itself: callers show the message of a failed fit's status */
  if (ws->m.source && ws->m.line)
    snprintf (where, sizeof where, "%s:%zu", ws->m.source, ws->m.line (ws->m.ctx, row));
  else
    snprintf (where, sizeof where, "row %zu", row + 1);
  return bl_fail (err, BL_ENOCONV, ws->m.source ? ws->m.source : "irls",
                  "%s at %s: the linear predictor left the %s link's range or the mean left "
                  "the %s family's mean space, and step halving could not recover",
                  code == 1 ? "invalid linear predictor" : "invalid mean", where,
                  ws->m.link->name, bl_family_name (ws->m.fam));
}

int
bl_irls_init (bl_irls_work *ws, bl_err *err)
{
  const bl_irls_model *m = &ws->m;
  const size_t n = ws->n, p = ws->p;
  long double sy = 0.0L, sa = 0.0L;
  double ybar;
  size_t bad_row = 0;
  int st;

  /* Column scales: one pass for max |X_ij|, then the power of two just above it, so that
     scaling is exact and the streamed sums cannot overflow (common practice, no source). */
  for (size_t j = 0; j < p; j++)
    ws->scale[j] = 0.0;
  BL_ROWBLOCK_FOR (rb, 0, n, BL_IRLS_BLOCK) {
    const size_t r0 = rb.row0, nb = rb.n;
    m->fill (m->ctx, r0, nb, ws->buf[0], ws->ld);
    for (size_t j = 0; j < p; j++)
      for (size_t i = 0; i < nb; i++) {
        const double v = fabs (ws->buf[0][i + j * ws->ld]);
        if (v > ws->scale[j])
          ws->scale[j] = v;
      }
  }
  for (size_t j = 0; j < p; j++) {
    int e;
    if (ws->scale[j] > 0.0 && isfinite (ws->scale[j])) {
      frexp (ws->scale[j], &e);
      ws->scale[j] = ldexp (1.0, -e);
    } else {
      ws->scale[j] = 1.0;
    }
  }

  for (size_t i = 0; i < n; i++) {
    const double a = m->prior_w ? m->prior_w[i] : 1.0;
    sy += a * m->y[i];
    sa += a;
  }
  ybar = (double) (sy / sa);
  /* Starting means (McCullagh & Nelder 1989, section 2.5: the data themselves, adjusted into
     the mean space), eta = g(mu_start). */
  for (size_t i = 0; i < n; i++) {
    const double mu0 = bl_family_mustart (m->fam, m->y[i], ybar);
    ws->eta[i] = m->link->g (mu0);
    if (!m->link->valid_eta (ws->eta[i])) {
      /* e.g. identity-link start at a mean the link cannot take: start from the mean of y */
      ws->eta[i] = m->link->g (ybar);
    }
  }
  st = pass (ws, NULL, 1, &bad_row);
  if (st)
    return st == 3 ? pass_error (ws, st, bad_row, err)
                   : bl_fail (err, BL_EDATA, "irls",
                              "no valid starting mean at row %zu for the %s family with the "
                              "%s link", bad_row + 1, bl_family_name (m->fam), m->link->name);
  ws->dev_prev = ws->dev;
  ws->iter = 0;
  ws->halvings = 0;
  ws->edge_streak = 0;
  ws->boundary = 0;
  if ((st = solve (ws, err)) != BL_OK)
    return st;
  /* A point to halve towards on the first step: the intercept-only fit at the weighted mean,
     valid on every row, when there is an intercept and no offset. */
  ws->have_prev = 0;
  if (m->intercept && !m->offset && m->link->valid_eta (m->link->g (ybar))
      && bl_family_mu_ok (m->fam, ybar)) {
    memset (ws->beta_prev, 0, p * sizeof (double));
    ws->beta_prev[0] = m->link->g (ybar);
    ws->have_prev = 1;
  }
  return BL_OK;
}

int
bl_irls_iterate (bl_irls_work *ws, bl_err *err)
{
  const size_t p = ws->p;
  size_t bad_row = 0, h = 0;
  int st;
  const double dev_ref = ws->dev;     /* deviance at the last accepted point */
  const int first = (ws->iter == 0);
  int edge = 0;                       /* this step was halved back inside the mean space */
  size_t edge_row = 0;
  int edge_code = 0;
  for (;;) {
    st = pass (ws, ws->beta_next, 1, &bad_row);
    if (st == 3)
      return pass_error (ws, st, bad_row, err);
    if (st != 0) {
      edge = 1;
      edge_row = bad_row;
      edge_code = st;
    }
    /* Step halving (common practice, no source; as in McCullagh & Nelder 1989, section
       2.5): while mu leaves the mean space, or the deviance rises, go half way back. */
    if (st == 0 && (first || !(ws->dev > dev_ref + 1e-12 * (fabs (dev_ref) + 0.1))))
      break;
    if (!ws->have_prev || h >= ws->opt.max_halvings) {
      if (st != 0 && !first && ws->have_prev) {
        /* Every halving toward the accepted point left the mean space: that point is
           within 2^-max_halvings of a step of the edge, pressed against the boundary.  The
           means are put back at it for the report. */
        size_t r2 = 0;
        ws->boundary = 1;
        ws->edge_row = bad_row;
        ws->edge_code = st;
        if (pass (ws, ws->beta, 0, &r2) == 3)
          return pass_error (ws, 3, r2, err);
      }
      if (st != 0)
        return pass_error (ws, st, bad_row, err);
      break;      /* the deviance could not be lowered further: accept (at the optimum) */
    }
    for (size_t j = 0; j < p; j++)
      ws->beta_next[j] = 0.5 * (ws->beta_next[j] + ws->beta_prev[j]);
    h++;
    ws->halvings++;
  }
  ws->dev_prev = first ? ws->dev_prev : dev_ref;
  if (edge && !first) {
    ws->edge_streak++;
    ws->edge_row = edge_row;
    ws->edge_code = edge_code;
  } else {
    ws->edge_streak = 0;
  }
  memcpy (ws->beta, ws->beta_next, p * sizeof (double));
  memcpy (ws->beta_prev, ws->beta_next, p * sizeof (double));
  ws->have_prev = 1;
  ws->iter++;
  return solve (ws, err);
}

int
bl_irls_test (const bl_irls_work *ws)
{
  if (ws->exact && ws->iter >= 1)
    return BL_OK;
  return (fabs (ws->dev_prev - ws->dev) <= ws->opt.epsrel * (fabs (ws->dev) + 0.1))
         ? BL_OK : BL_CONTINUE;
}

int
bl_irls_finish (bl_irls_work *ws, bl_err *err)
{
  /* The last solve's coefficients are one scoring step beyond the accepted point; move there
     when the deviance does not rise and the step is within the iteration limit (the move is
     an iteration), so that coefficients, means and covariance agree.  At an interior maximum
     that step is tiny and stays in the mean space; when it leaves the mean space the maximum
     is pressed against the edge of the parameter space (a mean running to 0 or to infinity, a linear predictor at
     the end of its link's range): bl_irls_boundary reports it (common practice, no source:
     the constrained maximum of a smooth likelihood is on the boundary exactly when the
     unconstrained Newton step from it points outside). */
  const double dev_acc = ws->dev;
  size_t bad_row = 0;
  int st;
  if (ws->exact) {
    /* gaussian identity: the accepted point is the exact least-squares solution, and its
       factor (already solved) gives the covariance */
    return BL_OK;
  }
  st = pass (ws, ws->beta_next, 1, &bad_row);
  if (st == 3)
    return pass_error (ws, st, bad_row, err);
  if (st != 0) {
    ws->boundary = 1;
    ws->edge_row = bad_row;
    ws->edge_code = st;
  }
  if (st == 0 && ws->iter < ws->opt.max_iter
      && ws->dev <= dev_acc + 1e-12 * (fabs (dev_acc) + 0.1)) {
    memcpy (ws->beta, ws->beta_next, ws->p * sizeof (double));
    ws->iter++;
    return solve (ws, err);      /* the factor at the final point; beta stays */
  }
  /* stay at the accepted point: recompute its means and factor */
  st = pass (ws, ws->beta, 1, &bad_row);
  if (st)
    return pass_error (ws, st, bad_row, err);
  return solve (ws, err);
}

/* The largest coefficient step of the last solve, in units of |beta_j| + se_j. */
static double
beta_change (const bl_irls_work *ws)
{
  const size_t p = ws->p;
  const double phi = bl_family_has (ws->m.fam, BL_FAM_PHI_FREE) && ws->n > ws->sol->rank
                     ? ws->dev / (double) (ws->n - ws->sol->rank) : 1.0;
  double worst = 0.0;
  for (size_t j = 0; j < p; j++) {
    double se, dj;
    if (ws->sol->aliased[j])
      continue;
    se = sqrt (phi * ws->sol->cov[j + j * p]);
    dj = fabs (ws->beta_next[j] - ws->beta[j]) / (fabs (ws->beta[j]) + se + DBL_MIN);
    if (!(dj <= worst))
      worst = dj;
  }
  return worst;
}

/* The convergence test of bl_irls_run, after the step just taken (the deviance test with
   the coefficient test): 1 converged, 0 not yet.  *PREV carries the last coefficient change
   seen while the deviance test held (HUGE_VAL when it did not). */
static int
converged (const bl_irls_work *ws, double *prev)
{
  double ch;
  /* A step that had to be halved back inside the mean space is not the end: at an interior
     maximum the last steps are full scoring steps. */
  if (bl_irls_test (ws) != BL_OK || ws->edge_streak > 0) {
    *prev = HUGE_VAL;
    return 0;
  }
  if (ws->exact)
    return 1;
  /* The deviance is second order in beta, so its test alone stops non-canonical fits about
     sqrt(eps n) standard errors short of the maximum: the coefficients must also have
     settled, every step below BL_IRLS_EPSBETA_RATIO eps (|beta_j| + se_j), or stopped
     shrinking (by a factor 0.9: the rounding floor). */
  ch = beta_change (ws);
  if (!(ch > BL_IRLS_EPSBETA_RATIO * ws->opt.epsrel) || ch >= 0.9 * *prev)
    return 1;
  *prev = ch;
  return 0;
}

int
bl_irls_run (bl_irls_work *ws, bl_err *err)
{
  double prev = HUGE_VAL;
  int st = bl_irls_init (ws, err);
  /* Every step counts against max_iter: the scoring steps and the finishing move. */
  while (st == BL_OK && ws->iter < ws->opt.max_iter) {
    st = bl_irls_iterate (ws, err);
    if (st == BL_OK && converged (ws, &prev))
      return bl_irls_finish (ws, err);
  }
  if (st != BL_OK)
    return st;
  /* Steps still being halved back inside the mean space at the limit: the iteration is
     creeping toward the edge of the parameter space rather than failing to settle. */
  if (!ws->exact && ws->edge_streak >= BL_IRLS_EDGE_STREAK)
    ws->boundary = 1;
  if (bl_irls_test (ws) == BL_OK)
    return bl_fail (err, BL_ENOCONV, "irls",
                    "no convergence in %zu iteration%s (the deviance settled at %.6g but the "
                    "coefficients were still moving by %.3g of |b| + se)", ws->opt.max_iter,
                    ws->opt.max_iter == 1 ? "" : "s", ws->dev, beta_change (ws));
  return bl_fail (err, BL_ENOCONV, "irls",
                  "no convergence in %zu iteration%s (deviance still changing: %.6g to %.6g)",
                  ws->opt.max_iter, ws->opt.max_iter == 1 ? "" : "s", ws->dev_prev, ws->dev);
}

int
bl_irls_boundary (const bl_irls_work *ws, size_t *row, int *eta_invalid)
{
  if (row)
    *row = ws->edge_row;
  if (eta_invalid)
    *eta_invalid = ws->edge_code == 1;
  return ws->boundary;
}

const double *bl_irls_beta (const bl_irls_work *ws) { return ws->beta; }
const bl_lsq_sol *bl_irls_sol (const bl_irls_work *ws) { return ws->sol; }
const double *bl_irls_mu (const bl_irls_work *ws) { return ws->mu; }
const double *bl_irls_eta (const bl_irls_work *ws) { return ws->eta; }
double bl_irls_deviance (const bl_irls_work *ws) { return ws->dev; }
size_t bl_irls_iterations (const bl_irls_work *ws) { return ws->iter; }
size_t bl_irls_halvings (const bl_irls_work *ws) { return ws->halvings; }
bl_solver bl_irls_solver (const bl_irls_work *ws) { return ws->solver; }
