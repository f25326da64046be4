/* job.h -- the settings of one modelling job, set key by key.

   The command line (--family gamma) and a spec file (family = gamma) set the same keys
   through bl_job_set, so a value means the same and is refused with the same message in
   both; only WHERE differs ("--family" or "pumps.spec:12").  The keys are those of the one
   option table (options.h). */
#ifndef BALLAST_JOB_H
#define BALLAST_JOB_H
#include <stddef.h>
#include "compare.h"
#include "design.h"
#include "error.h"
#include "fit.h"
#include "table.h"
#include "terms.h"
#ifdef __cplusplus
extern "C" {
#endif

#define BL_JOB_MAX_LIST 256

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
} bl_job;

/* Defaults: intercept on, the fit and table defaults, BL_COMPARE_FOLDS, BL_COMPARE_SEED. */
void bl_job_init (bl_job *j);
/* Free the strings.  The job can be reused after bl_job_init. */
void bl_job_clear (bl_job *j);
/* Deep copy SRC into DST (initialized or cleared).  BL_OK or BL_ENOMEM. */
int bl_job_copy (bl_job *dst, const bl_job *src, bl_err *err);


/* ---- The job's keys, one table for the command line, spec files and --help (options.c).
   A front end lists them by index I < bl_job_key_count () in --help order. */
/* The table holds fewer keys than this (spec.c sizes its per-section record by it, the CLI
   its getopt array and codes). */
#define BL_OPTION_MAX 64
/* Where a key is taken and what it means to the commands (bit set). */
enum {
  BL_OPTION_CLI = 1u << 0,         /* a shared option of fit, diagnose and compare (--KEY); a
                                      key without it is a spec key only, its command-line form
                                      being elsewhere (the DATA argument; compare's own
                                      --candidates, --folds and --seed) */
  BL_OPTION_MODEL = 1u << 1,       /* a single-model key: a spec job that sets one fits one
                                      model, and it cannot be combined with candidates */
  BL_OPTION_METHOD = 1u << 2,      /* chooses the method: diagnose fits OLS without one */
  BL_OPTION_CANDIDATE = 1u << 3    /* compare's candidates choose it: compare refuses it */
};

size_t bl_job_key_count (void);
const char *bl_job_key_name (size_t i);            /* "family"; NULL when I is out of range */
unsigned bl_job_key_flags (size_t i);              /* BL_OPTION_...; 0 out of range */
int bl_job_key_takes_value (size_t i);             /* 1: --KEY VALUE; 0: a flag */
/* The key's --help: its section ("model"), the value's placeholder after --KEY (NULL for a
   flag) and its text (lines separated by '\n', without the last one); all NULL for a key
   that is not a shared command-line option. */
void bl_job_key_help (size_t i, const char **group, const char **arg, const char **help);

/* Whether KEY is one of the job's keys, the entries of the option table (options.c: its
   key, where it is taken, its setter and its help): for spec files, "unknown key". */
int bl_job_has_key (const char *key);
/* Whether KEY takes no value on the command line (a BL_OPTION_FLAG: no-intercept,
   decimal-comma). */
int bl_job_key_is_flag (const char *key);

/* Set KEY, a key of the option table, to VALUE through the key's setter.  Flags take VALUE
   NULL, or yes/no/true/false/1/0; categorical is a comma list that replaces the previous one,
   reference (COL=LEVEL, comma lists) accumulates.  A bad value is BL_ESPEC with
   ERR->where = WHERE and a message that quotes it ("unknown key 'K'" and "'K' needs a value"
   first); BL_ENOMEM.  Term syntax is checked by bl_job_parse_terms, not here. */
int bl_job_set (bl_job *j, const char *key, const char *value, const char *where,
                bl_err *err);

/* Check the combination after every key is set, and resolve implied choices (a variance
   function implies wls, a transform ols).  SINGLE: the job fits one model (fit, diagnose)
   rather than a comparison.  BL_ESPEC naming the option ("--variance") or WHERE_SPEC when
   not NULL (a spec file's job line). */
int bl_job_finish (bl_job *j, int single, const char *where_spec, bl_err *err);

/* Parse the terms and the offset (syntax only).  *TERMS and *OFFSET are NULL when not given;
   the caller frees them.  BL_ESPEC with where "--terms"/"--offset" or WHERE_SPEC. */
int bl_job_parse_terms (const bl_job *j, const char *where_spec, bl_terms **terms,
                        bl_terms **offset, bl_err *err);

/* The design options the job implies (OFFSET parsed as above). */
void bl_job_design_opts (const bl_job *j, const bl_terms *offset, bl_design_opts *dopt);

/* Read the table and build the design (terms parsed as above).  Only the columns the job
   names are kept (see bl_table_opts.keep); bl_job_load_with keeps column ALSO too (may be
   NULL), for a caller that needs one more (diagnose --by). */
int bl_job_load_with (const bl_job *j, const bl_terms *terms, const bl_terms *offset,
                      const char *also, bl_table **table, bl_design **design, bl_err *err);
int bl_job_load (const bl_job *j, const bl_terms *terms, const bl_terms *offset,
                 bl_table **table, bl_design **design, bl_err *err);

#ifdef __cplusplus
}
#endif
#endif
