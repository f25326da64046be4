/* job_run.h -- one job from its settings to its results: the fit or the comparison, the
   checks it asks for (diagnostics, the nested test, the spread by group) and the series the
   report's plots draw.  The command line (ballast fit, diagnose, compare) and the batch
   runner (ballast run) call bl_job_run, and the writers (report.h, batch.h) only format what
   it returns; the residual table is made from the result when it is written
   (bl_job_resid_table), never held in it. */
#ifndef BALLAST_JOB_RUN_H
#define BALLAST_JOB_RUN_H
#include <signal.h>
#include <stddef.h>
#include "compare.h"
#include "design.h"
#include "diag.h"
#include "error.h"
#include "fit.h"
#include "job.h"
#include "nested.h"
#include "table.h"
#include "terms.h"
#ifdef __cplusplus
extern "C" {
#endif

/* What a job runs. */
typedef enum bl_job_task {
  BL_JOB_FIT,        /* one model; with in.against, the likelihood-ratio test against it */
  BL_JOB_DIAGNOSE,   /* one model and its checks (bl_diag_new); with opts.by, Brown-Forsythe */
  BL_JOB_COMPARE     /* the job's candidates (job->candidates, job->folds) on one row set */
} bl_job_task;

typedef struct bl_job_run_opts {
  bl_job_task task;
  unsigned long seed;              /* compare: the folds' and null points'; diagnose: the null
                                      quantile's; the plots' draws and the residual table's */
  int plots;                       /* compute the report's plot series (bl_job_plots) */
  const char *by;                  /* diagnose: the categorical column of the spread test by
                                      group (the table must hold it), or NULL */
  volatile sig_atomic_t *cancel;   /* put into the fit's, the comparison's and the checks'
                                      options, and polled between the plot series; may be NULL */
} bl_job_run_opts;

/* Task BL_JOB_FIT, seed BL_DIAG_SEED, no plots, no by, no cancel flag. */
void bl_job_run_opts_init (bl_job_run_opts *opt);

/* The inputs, as bl_job_load made them from the job (the caller keeps them alive while the
   result lives: the result's fits point into the design). */
typedef struct bl_job_input {
  const bl_table *table;
  const bl_design *design;
  const bl_terms *offset;          /* the parsed offset, or NULL */
  const bl_terms *against;         /* fit: the smaller model's parsed terms, or NULL */
} bl_job_input;

/* A residual panel: Pearson residuals against fitted values of one fit. */
typedef struct bl_plot_panel {
  const bl_candidate *cand;        /* the candidate (a comparison), NULL for a single model */
  const bl_fit *fit;
  double *pearson;                 /* length n (bl_pearson_residuals) */
} bl_plot_panel;

/* The series the report draws, in the order it draws them.  For a comparison: a panel per
   fitted candidate in rank order, then the winner's spread groups and quantile residuals, the
   Box-Cox profile (of ls-bc) and the mean-variance points (of ls); for a single model that
   converged: its panel, spread groups with the null point, quantile residuals and
   mean-variance points. */
typedef struct bl_job_plots {
  size_t npanels;
  bl_plot_panel panel[BL_COMPARE_MAX];
  const bl_fit *main;              /* the winner or the single model; NULL: no winner */
  bl_spread spread;                /* main's spread groups (null95 set for a single model) */
  double null95;                   /* the null 95% point of the ratio drawn as a level */
  size_t nq;
  double *qq;                      /* main's quantile residuals, sorted, length nq */
  double qq_p;                     /* their Kolmogorov-Smirnov p (the candidate's, or computed) */
  const bl_candidate *profile;     /* ls-bc when fitted (drawn if it has a profile) */
  const bl_fit *power_fit;         /* the fit of the mean-variance plot (ls, or the model) */
  bl_power power;                  /* its points and slope (bl_variance_power) */
} bl_job_plots;

/* Compute the plot series of comparison C or fit FIT (the other NULL) into P, drawing with
   a generator seeded with SEED: for a single model the spread ratio's null quantile first,
   then the quantile residuals from the same stream; for a comparison the winner's quantile
   residuals.  A single model that did not converge has no series (P->main NULL).  BL_OK,
   BL_ENOMEM, or BL_ECANCEL (where "report") once CANCEL (may be NULL) is set; P is cleared
   on failure.  Free with bl_job_plots_clear, which accepts a zeroed P. */
int bl_job_plots_init (bl_job_plots *p, const bl_compare *c, const bl_fit *fit,
                       unsigned long seed, volatile sig_atomic_t *cancel, bl_err *err);
void bl_job_plots_clear (bl_job_plots *p);

typedef struct bl_job_result bl_job_result;   /* opaque; defined in job_run.c */

/* Run JOB (finished with bl_job_finish) on IN as OPT says.  Returns BL_OK with *OUT the
   result (the caller frees it with bl_job_result_free), or a status with ERR filled (where
   and message of the failing library call):
   - *OUT NULL: the model could not be made (the fit or the comparison failed; BL_ENOMEM,
     BL_EDATA, BL_ESPEC, BL_ENOCONV, BL_ECANCEL as they report);
   - *OUT set: a later stage failed (the nested test, the checks, the spread by group, the
     plot series) and the result holds every stage before it, so that the caller can report
     what is done (the fit's warnings) before the error.
   A single model that does not converge is not a failure: the result holds it, and the
   stages that need a converged model are skipped (the checks then fail with BL_ENOCONV). */
int bl_job_run (const bl_job *job, const bl_job_input *in, const bl_job_run_opts *opt,
                bl_job_result **out, bl_err *err);
void bl_job_result_free (bl_job_result *r);

/* Accessors; pointers stay valid until bl_job_result_free. */
const bl_fit *bl_job_result_fit (const bl_job_result *r);          /* single model, or NULL */
const bl_compare *bl_job_result_compare (const bl_job_result *r);  /* comparison, or NULL */
/* The model whose residuals are reported: the single model when it converged, the
   comparison's winner; NULL when there is none. */
const bl_fit *bl_job_result_model (const bl_job_result *r);
const bl_diag *bl_job_result_diag (const bl_job_result *r);        /* diagnose, or NULL */
const bl_nested *bl_job_result_nested (const bl_job_result *r);    /* tested, or NULL */
const bl_bf *bl_job_result_by (const bl_job_result *r);            /* opts.by, or NULL */
/* The single model's spread ratio (from the plot series), NAN when not computed or when it
   does not exist (fewer than 40 rows). */
double bl_job_result_spread_ratio (const bl_job_result *r);
const bl_job_plots *bl_job_result_plots (const bl_job_result *r);  /* opts.plots, or NULL */
unsigned long bl_job_result_seed (const bl_job_result *r);

/* The residual table of the result's model (bl_resid_table_new), its quantile residuals
   drawn with a generator seeded with the run's seed.  NULL with ERR: no model (BL_EINTERNAL),
   BL_ENOMEM, BL_ECANCEL once CANCEL (may be NULL) is set.  Free with bl_resid_table_free. */
bl_resid_table *bl_job_resid_table (const bl_job_result *r, volatile sig_atomic_t *cancel,
                                    bl_err *err);

#ifdef __cplusplus
}
#endif
#endif
