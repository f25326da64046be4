/* job.h -- the settings of one modelling job, set key by key.

   The command line (--family gamma) and a spec file (family = gamma) set the same keys
   through bl_job_set, so a value means the same and is refused with the same message in
   both; only WHERE differs ("--family" or "pumps.spec:12").  The keys are those of the one
   option table (options.c).

   This header holds the job layer's public interface: a job's settings (bl_job), the spec
   file of many jobs (bl_spec), the runner of one job (bl_job_run) and the batch of a spec's
   jobs into a report folder (bl_batch_run). */
#ifndef BALLAST_JOB_H
#define BALLAST_JOB_H
#include <signal.h>
#include <stddef.h>
#include <stdio.h>
#include "compare.h"
#include "design.h"
#include "diag.h"
#include "error.h"
#include "fit.h"
#include "table.h"
#include "terms.h"
#ifdef __cplusplus
extern "C" {
#endif

#define BL_JOB_MAX_LIST 256
/* The table holds fewer keys than this (spec.c sizes its per-section record by it, the CLI
   its getopt array and codes, bl_job its record of the keys given). */
#define BL_OPTION_MAX 64

typedef struct bl_job {
  char *data, *response, *terms, *weights, *offset, *candidates, *varcol, *against, *cluster;
  char *categorical[BL_JOB_MAX_LIST];
  size_t ncat;
  char *reference[BL_JOB_MAX_LIST];
  size_t nref;
  int intercept;
  int method_given;        /* --method was set */
  int model_keys;          /* a single-model key (BL_OPTION_MODEL, options.h) was set */
  bl_fit_opts fit;
  bl_table_opts table;
  size_t folds;
  unsigned long seed;
  int seed_given;
  char fam_par_key;        /* 't' after theta, 'p' after power, else 0 */
  unsigned char given[BL_OPTION_MAX];  /* given[I]: key I of the option table was set (so
                                          bl_job_finish can name a key that does not apply) */
} bl_job;

/* Defaults: intercept on, the fit and table defaults, BL_COMPARE_FOLDS, BL_COMPARE_SEED. */
BL_API void bl_job_init (bl_job *j);
/* Free the strings.  The job can be reused after bl_job_init. */
BL_API void bl_job_clear (bl_job *j);
/* Deep copy SRC into DST (initialized or cleared).  BL_OK or BL_ENOMEM. */
BL_API int bl_job_copy (bl_job *dst, const bl_job *src, bl_err *err);


/* ---- The job's keys, one table for the command line, spec files and --help (options.c).
   A front end lists them by index I < bl_job_key_count () in --help order. */
/* Where a key is taken and what it means to the commands (bit set). */
enum {
  BL_OPTION_CLI = 1u << 0,         /* a shared option of fit, diagnose and compare (--KEY); a
                                      key without it is a spec key only, its command-line form
                                      being elsewhere (the DATA argument; compare's own
                                      --candidates, --folds and --seed) */
  BL_OPTION_MODEL = 1u << 1,       /* a single-model key: a spec job that sets one fits one
                                      model, and it cannot be combined with candidates */
  BL_OPTION_METHOD = 1u << 2,      /* chooses the method: diagnose fits OLS without one */
  BL_OPTION_CANDIDATE = 1u << 3,   /* compare's candidates choose it: compare refuses it */
  BL_OPTION_ESTIMATES = 1u << 4    /* it changes only the coefficient table (standard errors,
                                      intervals): diagnose and compare, which report none,
                                      refuse it, and so does a spec job that is a comparison */
};

BL_API size_t bl_job_key_count (void);
BL_API const char *bl_job_key_name (size_t i);     /* "family"; NULL when I is out of range */
BL_API unsigned bl_job_key_flags (size_t i);       /* BL_OPTION_...; 0 out of range */
BL_API int bl_job_key_takes_value (size_t i);             /* 1: --KEY VALUE; 0: a flag */
/* The key's --help: its section ("model"), the value's placeholder after --KEY (NULL for a
   flag) and its text (lines separated by '\n', without the last one); all NULL for a key
   that is not a shared command-line option. */
BL_API void bl_job_key_help (size_t i, const char **group, const char **arg, const char **help);

/* Whether KEY is one of the job's keys, the entries of the option table (options.c: its
   key, where it is taken, its setter and its help): for spec files, "unknown key". */
BL_API int bl_job_has_key (const char *key);
/* Whether KEY takes no value on the command line (a BL_OPTION_FLAG: no-intercept,
   decimal-comma). */
BL_API int bl_job_key_is_flag (const char *key);

/* Set KEY, a key of the option table, to VALUE through the key's setter.  Flags take VALUE
   NULL, or yes/no/true/false/1/0; categorical is a comma list that replaces the previous one,
   reference (COL=LEVEL, comma lists) accumulates.  A bad value is BL_ESPEC with
   ERR->where = WHERE and a message that quotes it ("unknown key 'K'" and "'K' needs a value"
   first); BL_ENOMEM.  Term syntax is checked by bl_job_parse_terms, not here. */
BL_API int bl_job_set (bl_job *j, const char *key, const char *value, const char *where,
                       bl_err *err);

/* Check the combination after every key is set, and resolve implied choices (a variance
   function implies wls, a transform ols).  SINGLE: the job fits one model (fit, diagnose)
   rather than a comparison; a comparison refuses the BL_OPTION_ESTIMATES keys and against.
   The smaller model of against is parsed (its syntax errors name "--against" or WHERE_SPEC)
   and, when the terms parse, each of its terms must be one of the job's terms and it must
   have fewer of them (a smaller model nested in the larger), so that a test that cannot be
   made is refused before any work.  BL_ESPEC naming the option ("--variance") or WHERE_SPEC
   when not NULL (a spec file's job line). */
BL_API int bl_job_finish (bl_job *j, int single, const char *where_spec, bl_err *err);

/* Parse the terms and the offset (syntax only).  *TERMS and *OFFSET are NULL when not given;
   the caller frees them.  BL_ESPEC with where "--terms"/"--offset" or WHERE_SPEC. */
BL_API int bl_job_parse_terms (const bl_job *j, const char *where_spec, bl_terms **terms,
                               bl_terms **offset, bl_err *err);

/* The design options the job implies (OFFSET parsed as above). */
BL_API void bl_job_design_opts (const bl_job *j, const bl_terms *offset, bl_design_opts *dopt);

/* Read the table and build the design (terms parsed as above).  Only the columns the job
   names are kept (see bl_table_opts.keep); bl_job_load_with keeps column ALSO too (may be
   NULL), for a caller that needs one more (diagnose --by). */
BL_API int bl_job_load_with (const bl_job *j, const bl_terms *terms, const bl_terms *offset,
                             const char *also, bl_table **table, bl_design **design, bl_err *err);
BL_API int bl_job_load (const bl_job *j, const bl_terms *terms, const bl_terms *offset,
                        bl_table **table, bl_design **design, bl_err *err);


/* ---- the batch spec file: a [defaults] section and one [job NAME] section per job.

   Format (doc/spec-format.md): plain text, UTF-8; '#' starts a comment line (and a comment
   after white space at the end of a value line); blank lines are ignored; a section header
   is "[defaults]" or "[job NAME]"; every other line is "key = value" with a key of the
   option table (options.h), set through bl_job_set (job.h), in either section.  A job
   starts from a copy of [defaults] (which must come first, at most once) and its own keys
   replace those values (reference accumulates).  Relative data paths resolve against the
   spec file's folder.

   The whole file is checked before any job runs: every error is BL_ESPEC with
   ERR->where = "FILE:LINE" (the line of the offending header or key) -- unknown keys, a key
   given twice in one section, a key outside any section, malformed lines, duplicate jobs,
   bad job names, bad values (through bl_job_set), bad term syntax (bl_job_parse_terms), a
   job without data or response, and every combination bl_job_finish refuses (a job with
   both candidates and single-model keys, a comparison with level, se, cluster or against,
   a smaller model not nested in the job's terms, and the rest), on the job's merged settings
   ([defaults] and its own keys).  A reference level given twice for one column, with
   different levels, is refused at the line of the second (in [defaults] or the job).  A missing data file is not a spec error: it is found when the job runs. */

#define BL_SPEC_NAME_MAX 64          /* job names: at most this many bytes */
#define BL_SPEC_MAX_JOBS 10000
#define BL_SPEC_MAX_LINE 65536       /* a longer line is an error */
#define BL_SPEC_MAX_BYTES ((size_t) 16 << 20)   /* a larger spec file (inflated) is an error */

typedef struct bl_spec_job {
  char name[BL_SPEC_NAME_MAX + 1];
  size_t line;                       /* the line of its [job NAME] header */
  int single;                        /* 1: one model (single-model keys given); 0: compare */
  bl_job job;                        /* data resolved against the spec's folder */
} bl_spec_job;

typedef struct bl_spec bl_spec;      /* opaque */

/* Job names: letters, digits, '-', '_' and '.', not starting with '.' or '-', 1 to
   BL_SPEC_NAME_MAX bytes, not "summary" or "index" (the report's own names, in any case and
   with any extension: "summary.csv", "Index.html").  Names
   must also be unique ignoring ASCII case.  1 when NAME is a valid name on its own. */
BL_API int bl_spec_name_ok (const char *name);

/* Read and check PATH.  NULL with ERR filled: BL_EIO (cannot read the file), BL_ESPEC (see
   above), BL_ENOMEM. */
BL_API bl_spec *bl_spec_read (const char *path, bl_err *err);
/* The same from memory; NAME is used in messages and DIR resolves relative data paths. */
BL_API bl_spec *bl_spec_read_mem (const char *text, size_t len, const char *name, const char *dir,
                                  bl_err *err);
BL_API void bl_spec_free (bl_spec *s);

BL_API size_t bl_spec_njobs (const bl_spec *s);
BL_API const bl_spec_job *bl_spec_get (const bl_spec *s, size_t i);   /* in file order */
/* The spec's file name without folder and extension ("demo" for data/demo.spec). */
BL_API const char *bl_spec_stem (const bl_spec *s);


/* ---- one job from its settings to its results: the fit or the comparison, the
   checks it asks for (diagnostics, the nested test, the spread by group) and the series the
   report's plots draw.  The command line (ballast fit, diagnose, compare) and the batch
   runner (ballast run) call bl_job_run, and the writers (report.h, batch.h) only format what
   it returns; the residual table is made from the result when it is written
   (bl_job_resid_table), never held in it. */

/* What a job runs. */
typedef enum bl_job_task {
  BL_JOB_FIT,        /* one model; with job->against, the likelihood-ratio test against it */
  BL_JOB_DIAGNOSE,   /* one model and its checks (bl_diag_new); with opts.by, Brown-Forsythe;
                        with job->against, the likelihood-ratio test as for BL_JOB_FIT */
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
BL_API void bl_job_run_opts_init (bl_job_run_opts *opt);

/* The inputs, as bl_job_load made them from the job (the caller keeps them alive while the
   result lives: the result's fits point into the design). */
typedef struct bl_job_input {
  const bl_table *table;
  const bl_design *design;
  const bl_terms *offset;          /* the parsed offset, or NULL */
  const bl_terms *against;         /* fit, diagnose: the smaller model's parsed terms; NULL:
                                      bl_job_run parses JOB->against itself when it is set */
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
BL_API int bl_job_plots_init (bl_job_plots *p, const bl_compare *c, const bl_fit *fit,
                              unsigned long seed, volatile sig_atomic_t *cancel, bl_err *err);
BL_API void bl_job_plots_clear (bl_job_plots *p);

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
BL_API int bl_job_run (const bl_job *job, const bl_job_input *in, const bl_job_run_opts *opt,
                       bl_job_result **out, bl_err *err);
BL_API void bl_job_result_free (bl_job_result *r);

/* Accessors; pointers stay valid until bl_job_result_free. */
/* the single model, or NULL */
BL_API const bl_fit *bl_job_result_fit (const bl_job_result *r);
/* the comparison, or NULL */
BL_API const bl_compare *bl_job_result_compare (const bl_job_result *r);
/* The model whose residuals are reported: the single model when it converged, the
   comparison's winner; NULL when there is none. */
BL_API const bl_fit *bl_job_result_model (const bl_job_result *r);
BL_API const bl_diag *bl_job_result_diag (const bl_job_result *r);        /* diagnose, or NULL */
BL_API const bl_nested *bl_job_result_nested (const bl_job_result *r);    /* tested, or NULL */
BL_API const bl_bf *bl_job_result_by (const bl_job_result *r);            /* opts.by, or NULL */
/* The single model's spread ratio (from the plot series), NAN when not computed or when it
   does not exist (fewer than 40 rows). */
BL_API double bl_job_result_spread_ratio (const bl_job_result *r);
BL_API const bl_job_plots *bl_job_result_plots (const bl_job_result *r);  /* opts.plots, or NULL */
BL_API unsigned long bl_job_result_seed (const bl_job_result *r);

/* The residual table of the result's model (bl_resid_table_new), its quantile residuals
   drawn with a generator seeded with the run's seed.  NULL with ERR: no model (BL_EINTERNAL),
   BL_ENOMEM, BL_ECANCEL once CANCEL (may be NULL) is set.  Free with bl_resid_table_free. */
BL_API bl_resid_table *bl_job_resid_table (const bl_job_result *r, volatile sig_atomic_t *cancel,
                                           bl_err *err);


/* ---- run the jobs of a spec file into an output folder.

   OUTDIR/JOB/result.json (the compare or fit JSON), OUTDIR/JOB/residuals.csv (of the winner,
   or of the single model), OUTDIR/summary.json, OUTDIR/summary.csv and OUTDIR/index.html.
   Every file is written under a temporary name in its folder (openat relative to the folder,
   O_CREAT | O_EXCL | O_NOFOLLOW), flushed, fsync'd and renamed (renameat), so an interrupted
   run never leaves a file that looks complete, and no write follows a symbolic link planted
   inside OUTDIR.  Files ballast does not own are left alone.  The temporaries are named
   ".NAME.tmp-PID-K-HEX"; a run killed outright can leave some, and bl_batch_run removes those
   of processes that no longer exist (in OUTDIR and the spec's job folders) before it starts.
   With opts.cancel set, a job cut short writes nothing and no further job starts. */

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
BL_API unsigned long bl_batch_seed (const char *job, unsigned long base);

typedef struct bl_batch_opts {
  unsigned jobs;                    /* jobs run at once (1 or more) */
  volatile sig_atomic_t *cancel;
  /* Called (from the thread that finishes it) after each job; may be NULL.  The library
     itself prints nothing. */
  void (*progress) (void *ctx, size_t done, size_t total, const char *job, double seconds);
  void *progress_ctx;
  /* The spec file's path (may be NULL), compared with the files the run writes, and the
     label that names OUTDIR in the message when one of them is an input ("--output";
     NULL: "OUTDIR"). */
  const char *spec_path;
  const char *outdir_label;
} bl_batch_opts;

BL_API void bl_batch_opts_init (bl_batch_opts *opt);

/* Run every job of SPEC into OUTDIR (created when missing).  ROWS (length njobs) receives the
   summary lines in spec order.  Returns BL_OK when every job ran (some may have failed: see
   ROWS), BL_ESPEC before anything is made when a file or folder the run would write is one
   of its inputs (a job's data, opts.spec_path: bl_path_set_check), BL_EIO when OUTDIR
   cannot be used (not a folder, a symbolic link, not writable: a temporary file is made and
   removed before the first job), BL_ECANCEL, BL_ENOMEM.  Out of memory anywhere stops the whole run (no job is marked
   failed for it): ERR->where names the job ("job 'NAME'", or "run" for the summaries), no
   more jobs start, and the summaries are not written; every file already written is
   complete, and a job's result.json and residuals.csv are both written or neither. */
BL_API int bl_batch_run (const bl_spec *spec, const char *outdir, const bl_batch_opts *opt,
                         bl_batch_row *rows, bl_err *err);

#ifdef __cplusplus
}
#endif
#endif
