/* batch.h -- run the jobs of a spec file into an output folder.

   OUTDIR/JOB/result.json (the compare or fit JSON), OUTDIR/JOB/residuals.csv (of the winner,
   or of the single model), OUTDIR/summary.json, OUTDIR/summary.csv and OUTDIR/index.html.
   Every file is written under a temporary name in its folder (openat relative to the folder,
   O_CREAT | O_EXCL | O_NOFOLLOW), flushed, fsync'd and renamed (renameat), so an interrupted
   run never leaves a file that looks complete, and no write follows a symbolic link planted
   inside OUTDIR.  Files ballast does not own are left alone.  The temporaries are named
   ".NAME.tmp-PID-K-HEX"; a run killed outright can leave some, and bl_batch_run removes those
   of processes that no longer exist (in OUTDIR and the spec's job folders) before it starts.
   With opts.cancel set, a job cut short writes nothing and no further job starts. */
#ifndef BALLAST_BATCH_H
#define BALLAST_BATCH_H
#include <signal.h>
#include <stddef.h>
#include <stdio.h>
#include "compare.h"
#include "error.h"
#include "fit.h"
#include "job_run.h"
#include "spec.h"
#ifdef __cplusplus
extern "C" {
#endif

/* One job's line of the summary. */
typedef struct bl_batch_row {
  char job[BL_SPEC_NAME_MAX + 1];
  int ok;                        /* 1: done; 0: failed (message says why) */
  char method[16];               /* "compare", or the single model's method */
  char winner[40];               /* candidate id, or the model (e.g. "gamma/log") */
  double aic, delta;             /* delta to the runner-up; NAN for a single model */
  double spread_ratio;
  size_t n;
  char message[1600];
} bl_batch_row;

/* The seed of a job: derived from its name (FNV-1a of the name, mixed with the base seed),
   so results do not depend on the order or number of jobs. */
unsigned long bl_batch_seed (const char *job, unsigned long base);

typedef struct bl_batch_opts {
  unsigned jobs;                    /* jobs run at once (1 or more) */
  volatile sig_atomic_t *cancel;
  /* Called (from the thread that finishes it) after each job; may be NULL.  The library
     itself prints nothing. */
  void (*progress) (void *ctx, size_t done, size_t total, const char *job, double seconds);
  void *progress_ctx;
} bl_batch_opts;

void bl_batch_opts_init (bl_batch_opts *opt);

/* Run every job of SPEC into OUTDIR (created when missing).  ROWS (length njobs) receives the
   summary lines in spec order.  Returns BL_OK when every job ran (some may have failed: see
   ROWS), BL_EIO when OUTDIR cannot be used (not a folder, a symbolic link, not writable),
   BL_ECANCEL, BL_ENOMEM.  Out of memory anywhere stops the whole run (no job is marked
   failed for it): ERR->where names the job ("job 'NAME'", or "run" for the summaries), no
   more jobs start, and the summaries are not written; every file already written is
   complete, and a job's result.json and residuals.csv are both written or neither. */
int bl_batch_run (const bl_spec *spec, const char *outdir, const bl_batch_opts *opt,
                  bl_batch_row *rows, bl_err *err);

/* The HTML report (report_html.c).  A job's section: its ranked table (or the single model),
   the recommendation and caution, and SVG plots drawn from PLOTS (job_run.h: the series the
   job runner computed for C or FIT; may be NULL only when nothing is drawn).  C or FIT is
   given (the other NULL); for a failed job both are NULL and ROW->message says why.  SEED is
   the plots' seed, as the section states it.  CANCEL (may be NULL) is polled between plots:
   once set, BL_ECANCEL with the section incomplete.  BL_EINTERNAL for contradictory
   arguments, BL_EIO when a write failed, BL_ENOMEM. */
int bl_report_section_html (FILE *out, const bl_batch_row *row, const bl_compare *c,
                            const bl_fit *fit, const bl_design *d, unsigned long seed,
                            const bl_job_plots *plots, volatile sig_atomic_t *cancel,
                            bl_err *err);
/* The same for a caller without the runner's series (batch.c): computes them with
   bl_job_plots_init (C or FIT, SEED, CANCEL), writes the section and frees them. */
int bl_report_job_html (FILE *out, const bl_batch_row *row, const bl_compare *c,
                        const bl_fit *fit, const bl_design *d, unsigned long seed,
                        volatile sig_atomic_t *cancel, bl_err *err);
/* The whole page around the sections (already written to strings, in job order). */
int bl_report_html_page (FILE *out, const char *title, const bl_batch_row *rows,
                         const char *const *sections, size_t njobs, bl_err *err);

#ifdef __cplusplus
}
#endif
#endif
