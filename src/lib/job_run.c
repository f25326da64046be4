/* job_run.c -- the job runner (see job_run.h): the one place where a job's settings become
   a fit or a comparison, its checks and its plot series.  The commands and the batch runner
   call it; every number a writer prints comes from here or from the library calls it makes,
   in the order they were made before the runner existed, so that seeded draws (the spread
   ratio's null, the randomized quantile residuals) give the same numbers. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_rng.h>
#include "alloc.h"
#include "job.h"
#include "options.h"

struct bl_job_result {
  bl_fit *fit;
  bl_compare *cmp;
  const bl_fit *model;
  bl_diag *diag;
  bl_nested nested;
  int have_nested;
  bl_bf bf;
  int have_bf;
  bl_job_plots plots;
  int have_plots;
  unsigned long seed;
};

void
bl_job_run_opts_init (bl_job_run_opts *opt)
{
  opt->task = BL_JOB_FIT;
  opt->seed = BL_DIAG_SEED;
  opt->plots = 0;
  opt->by = NULL;
  opt->cancel = NULL;
}

/* ---------------------------------------------------------------- plot series */

static int
plots_cancelled (volatile sig_atomic_t *cancel, bl_err *err)
{
  if (cancel && *cancel)
    return bl_fail (err, BL_ECANCEL, "report", "the report was cancelled");
  return BL_OK;
}

static int
cmp_double (const void *pa, const void *pb)
{
  const double a = *(const double *) pa, b = *(const double *) pb;
  return (a > b) - (a < b);
}

static size_t
fit_n (const bl_fit *f)
{
  return bl_design_n (bl_fit_design (f));
}

/* A residual panel of F (its Pearson residuals). */
static int
add_panel (bl_job_plots *p, const bl_candidate *k, const bl_fit *f, bl_err *err)
{
  const size_t n = fit_n (f);
  bl_plot_panel *pl = &p->panel[p->npanels];
  pl->pearson = bl_mallocn (n ? n : 1, sizeof *pl->pearson);
  if (!pl->pearson)
    return bl_fail (err, BL_ENOMEM, "report", "out of memory");
  pl->cand = k;
  pl->fit = f;
  bl_pearson_residuals (f, pl->pearson);
  p->npanels++;
  return BL_OK;
}

/* The quantile residuals of P->main drawn from RNG, sorted, with their Kolmogorov-Smirnov p
   unless PVAL (the comparison's own) is finite.  Normal quantile plot of the quantile
   residuals: Dunn & Smyth 1996, J. Comput. Graph. Statist. 5, 236-244. */
static int
main_qq (bl_job_plots *p, gsl_rng *rng, double pval, bl_err *err)
{
  const size_t n = fit_n (p->main);
  int st;
  p->qq = bl_mallocn (n ? n : 1, sizeof *p->qq);
  if (!p->qq)
    return bl_fail (err, BL_ENOMEM, "report", "out of memory");
  p->nq = n;
  if ((st = bl_quantile_residuals (p->main, rng, p->qq, err)) != BL_OK)
    return st;
  qsort (p->qq, n, sizeof *p->qq, cmp_double);
  if (!isfinite (pval) && n > 0) {
    double dstat;
    bl_ks_normal (p->qq, n, &dstat, &pval);    /* qq is sorted already: order unchanged */
  }
  p->qq_p = pval;
  return BL_OK;
}

/* The main fit's spread groups: its Pearson residuals (the first panel's) grouped by fitted
   value; with RNG, the null 95% point of the ratio simulated as well (diag.h). */
static int
main_spread (bl_job_plots *p, const double *r, gsl_rng *rng, bl_err *err)
{
  return bl_spread_compute (bl_fit_mu (p->main), r, fit_n (p->main), rng,
                            rng ? BL_DIAG_NULL_REPS : 0, &p->spread, err);
}

static const bl_candidate *
find_candidate (const bl_compare *c, const char *id)
{
  for (size_t i = 0; i < bl_compare_count (c); i++) {
    const bl_candidate *k = bl_compare_get (c, i);
    if (strcmp (k->id, id) == 0 && k->fit && k->converged)
      return k;
  }
  return NULL;
}

/* A comparison's series: the panels in rank order (ranked first, then the unranked in table
   order), the winner's spread groups (its null point is the comparison's) and quantile
   residuals, the Box-Cox profile and the mean-variance points of ls. */
static int
compare_plots (bl_job_plots *p, const bl_compare *c, gsl_rng *rng,
               volatile sig_atomic_t *cancel, bl_err *err)
{
  const size_t nc = bl_compare_count (c);
  const long win = bl_compare_winner (c);
  const bl_candidate *ls = find_candidate (c, "ls");
  int st;
  for (size_t pos = 0; pos <= nc; pos++)
    for (size_t i = 0; i < nc; i++) {
      const bl_candidate *k = bl_compare_get (c, i);
      if (k->rank_position != (pos < nc ? pos + 1 : 0) || !k->fit || !k->converged
          || p->npanels == BL_COMPARE_MAX)
        continue;
      if ((st = plots_cancelled (cancel, err)) != BL_OK
          || (st = add_panel (p, k, k->fit, err)) != BL_OK)
        return st;
    }
  if (win >= 0) {
    const bl_candidate *w = bl_compare_get (c, (size_t) win);
    double *r;
    p->main = w->fit;
    p->null95 = w->spread_null95;
    r = bl_mallocn (fit_n (w->fit) ? fit_n (w->fit) : 1, sizeof *r);
    if (!r)
      return bl_fail (err, BL_ENOMEM, "report", "out of memory");
    bl_pearson_residuals (w->fit, r);
    st = plots_cancelled (cancel, err);
    if (st == BL_OK)
      st = main_spread (p, r, NULL, err);
    bl_free (r);
    if (st != BL_OK || (st = plots_cancelled (cancel, err)) != BL_OK
        || (st = main_qq (p, rng, w->normality_p, err)) != BL_OK)
      return st;
  }
  p->profile = find_candidate (c, "ls-bc");
  if (ls) {
    p->power_fit = ls->fit;
    if ((st = plots_cancelled (cancel, err)) != BL_OK
        || (st = bl_variance_power (ls->fit, &p->power, err)) != BL_OK)
      return st;
  }
  return BL_OK;
}

/* A single model's series: its panel, its spread groups with the null point (the spread
   ratio's null, drawn first from RNG), its quantile residuals (drawn next from the same
   stream) and its mean-variance points. */
static int
fit_plots (bl_job_plots *p, const bl_fit *f, gsl_rng *rng, volatile sig_atomic_t *cancel,
           bl_err *err)
{
  int st;
  if (!bl_fit_stats_get (f)->converged)
    return BL_OK;
  if ((st = plots_cancelled (cancel, err)) != BL_OK || (st = add_panel (p, NULL, f, err))
      != BL_OK)
    return st;
  p->main = f;
  if ((st = plots_cancelled (cancel, err)) != BL_OK
      || (st = main_spread (p, p->panel[0].pearson, rng, err)) != BL_OK)
    return st;
  p->null95 = p->spread.null95;
  if ((st = plots_cancelled (cancel, err)) != BL_OK || (st = main_qq (p, rng, NAN, err))
      != BL_OK)
    return st;
  p->power_fit = f;
  if ((st = plots_cancelled (cancel, err)) != BL_OK
      || (st = bl_variance_power (f, &p->power, err)) != BL_OK)
    return st;
  return BL_OK;
}

int
bl_job_plots_init (bl_job_plots *p, const bl_compare *c, const bl_fit *fit,
                   unsigned long seed, volatile sig_atomic_t *cancel, bl_err *err)
{
  gsl_rng *rng = NULL;
  int st = BL_OK;
  memset (p, 0, sizeof *p);
  p->null95 = p->qq_p = NAN;
  if ((c != NULL) == (fit != NULL))
    return bl_fail (err, BL_EINTERNAL, "report", "give a comparison or a single model");
  if (!(rng = gsl_rng_alloc (gsl_rng_mt19937))) {
    st = bl_fail (err, BL_ENOMEM, "report", "out of memory");
    goto done;
  }
  gsl_rng_set (rng, seed);
  st = c ? compare_plots (p, c, rng, cancel, err) : fit_plots (p, fit, rng, cancel, err);
done:
  if (rng)
    gsl_rng_free (rng);
  if (st != BL_OK)
    bl_job_plots_clear (p);
  return st;
}

void
bl_job_plots_clear (bl_job_plots *p)
{
  for (size_t i = 0; i < p->npanels; i++)
    bl_free (p->panel[i].pearson);
  bl_spread_clear (&p->spread);
  bl_free (p->qq);
  memset (p, 0, sizeof *p);
  p->null95 = p->qq_p = NAN;
}

/* ---------------------------------------------------------------- the runner */

/* The model: a comparison of the job's candidates, or one fit.  BL_OK or the library's
   status with ERR. */
static int
run_model (bl_job_result *r, const bl_job *job, const bl_job_input *in,
           const bl_job_run_opts *opt, bl_err *err)
{
  if (opt->task == BL_JOB_COMPARE) {
    bl_compare_opts co;
    long w;
    /* More folds than rows cannot be made: refused once the rows are known, before any
       candidate is fitted (the folds' own guard is in compare_cv.c). */
    const int folds_default = !job->given[bl_option_index (bl_option_find ("folds"))];
    if (job->folds > bl_design_n (in->design) && !folds_default)
      return bl_fail (err, BL_EDATA, "--folds", "%zu folds need at least %zu rows; the model "
                      "has %zu", job->folds, job->folds, bl_design_n (in->design));
    bl_compare_opts_init (&co);
    co.candidates = job->candidates;
    co.folds = job->folds;
    co.folds_default = folds_default;
    co.seed = opt->seed;
    co.fit = job->fit;
    co.fit.irls.cancel = opt->cancel;
    if (!(r->cmp = bl_compare_run (in->design, &co, err)))
      return err ? err->code : BL_ENOMEM;
    w = bl_compare_winner (r->cmp);
    r->model = w >= 0 ? bl_compare_get (r->cmp, (size_t) w)->fit : NULL;
  } else {
    bl_fit_opts fo = job->fit;
    fo.irls.cancel = opt->cancel;
    if (!(r->fit = bl_fit_new (in->design, &fo, err)))
      return err ? err->code : BL_ENOMEM;
    r->model = bl_fit_stats_get (r->fit)->converged ? r->fit : NULL;
  }
  return BL_OK;
}

/* The likelihood-ratio test of the single model against the smaller model of job->against
   (IN->against, or parsed here), on the same rows.  bl_job_finish has refused a smaller
   model that is not nested by its terms; bl_nested_test's own status is returned as it is. */
static int
run_nested (bl_job_result *r, const bl_job *job, const bl_job_input *in,
            const bl_job_run_opts *opt, bl_err *err)
{
  bl_design_opts dopt;
  bl_fit_opts fo = job->fit;
  bl_terms *own = NULL;
  const bl_terms *small = in->against;
  int st;
  if (!small && !(small = own = bl_terms_parse (job->against, "--against", err)))
    return err ? err->code : BL_ESPEC;
  fo.irls.cancel = opt->cancel;
  bl_job_design_opts (job, in->offset, &dopt);
  st = bl_nested_test (r->fit, in->table, small, &dopt, &fo, &r->nested, err);
  bl_terms_free (own);
  if (st == BL_OK)
    r->have_nested = 1;
  return st;
}

/* The checks a single model asks for: the nested test (fit, diagnose), the diagnostics and
   the spread by group (diagnose). */
static int
run_checks (bl_job_result *r, const bl_job *job, const bl_job_input *in,
            const bl_job_run_opts *opt, bl_err *err)
{
  int st;
  if (opt->task != BL_JOB_COMPARE && (in->against || job->against) && r->model
      && (st = run_nested (r, job, in, opt, err)) != BL_OK)
    return st;
  if (opt->task == BL_JOB_DIAGNOSE) {
    bl_diag_opts dgo;
    bl_diag_opts_init (&dgo);
    dgo.seed = opt->seed;
    dgo.cancel = opt->cancel;
    if (!(r->diag = bl_diag_new (r->fit, &dgo, err)))
      return err ? err->code : BL_ENOMEM;
    if (opt->by) {
      if ((st = bl_brown_forsythe (r->fit, in->table, opt->by, &r->bf, err)) != BL_OK)
        return st;
      r->have_bf = 1;
    }
  }
  return BL_OK;
}

int
bl_job_run (const bl_job *job, const bl_job_input *in, const bl_job_run_opts *opt,
            bl_job_result **out, bl_err *err)
{
  bl_job_result *r = bl_calloc (1, sizeof *r);
  int st;
  *out = NULL;
  if (!r)
    return bl_fail (err, BL_ENOMEM, "job", "out of memory");
  r->seed = opt->seed;
  r->plots.null95 = r->plots.qq_p = NAN;
  if ((st = run_model (r, job, in, opt, err)) != BL_OK) {
    bl_job_result_free (r);
    return st;
  }
  *out = r;
  if ((st = run_checks (r, job, in, opt, err)) != BL_OK)
    return st;
  if (opt->plots && (r->cmp || r->model)) {
    if ((st = bl_job_plots_init (&r->plots, r->cmp, r->cmp ? NULL : r->fit, opt->seed,
                                 opt->cancel, err)) != BL_OK)
      return st;
    r->have_plots = 1;
  }
  return BL_OK;
}

void
bl_job_result_free (bl_job_result *r)
{
  if (!r)
    return;
  bl_job_plots_clear (&r->plots);
  if (r->have_bf)
    bl_bf_clear (&r->bf);
  bl_diag_free (r->diag);
  bl_compare_free (r->cmp);
  bl_fit_free (r->fit);
  bl_free (r);
}

const bl_fit *bl_job_result_fit (const bl_job_result *r) { return r->fit; }
const bl_compare *bl_job_result_compare (const bl_job_result *r) { return r->cmp; }
const bl_fit *bl_job_result_model (const bl_job_result *r) { return r->model; }
const bl_diag *bl_job_result_diag (const bl_job_result *r) { return r->diag; }
unsigned long bl_job_result_seed (const bl_job_result *r) { return r->seed; }

const bl_nested *
bl_job_result_nested (const bl_job_result *r)
{
  return r->have_nested ? &r->nested : NULL;
}

const bl_bf *
bl_job_result_by (const bl_job_result *r)
{
  return r->have_bf ? &r->bf : NULL;
}

double
bl_job_result_spread_ratio (const bl_job_result *r)
{
  return r->have_plots && r->fit && r->plots.main ? r->plots.spread.ratio : NAN;
}

const bl_job_plots *
bl_job_result_plots (const bl_job_result *r)
{
  return r->have_plots ? &r->plots : NULL;
}

bl_resid_table *
bl_job_resid_table (const bl_job_result *r, volatile sig_atomic_t *cancel, bl_err *err)
{
  gsl_rng *rng;
  bl_resid_table *t;
  if (!r->model) {
    bl_fail (err, BL_EINTERNAL, "residuals", "no model to take residuals of");
    return NULL;
  }
  if (!(rng = gsl_rng_alloc (gsl_rng_mt19937))) {
    bl_fail (err, BL_ENOMEM, "residuals", "out of memory");
    return NULL;
  }
  gsl_rng_set (rng, r->seed);
  t = bl_resid_table_new (r->model, rng, cancel, err);
  gsl_rng_free (rng);
  return t;
}
