/* model_opts.h -- the options every modelling subcommand shares (data, terms, model,
   numerics), parsed once and turned into a table and a design. */
#ifndef BALLAST_MODEL_OPTS_H
#define BALLAST_MODEL_OPTS_H
#include <getopt.h>
#include "ballast.h"

/* getopt codes: a shared option is CLI_OPT_BASE + the index of its key in the option table
   (bl_job_key_count, job.h); a subcommand numbers its own options from OPT_FIRST_OWN. */
enum {
  CLI_OPT_BASE = 256,
  OPT_FIRST_OWN = CLI_OPT_BASE + BL_OPTION_MAX,
  CLI_OWN_MAX = 16              /* a subcommand has fewer own long options than this */
};
/* Room for the shared long options, a subcommand's own and the zero entry. */
#define CLI_LONG_OPTS_MAX (BL_OPTION_MAX + CLI_OWN_MAX + 1)

/* The own options every modelling subcommand ends its own_opts[] with: -o, -q, -h and the
   zero entry. */
#define CLI_OUTPUT_OPTS                                  \
  { "output", required_argument, NULL, 'o' },            \
  { "quiet", no_argument, NULL, 'q' },                   \
  { "help", no_argument, NULL, 'h' },                    \
  { NULL, 0, NULL, 0 }

/* Fill LONG_OPTS (CLI_LONG_OPTS_MAX entries) with the shared options, the table's
   BL_OPTION_CLI keys in table order, then OWN (fewer than CLI_OWN_MAX entries, ended by a
   zero entry), then the zero entry. */
void cli_model_long_opts (struct option *long_opts, const struct option *own);
/* Whether getopt code C is a shared option whose key has every bit of FLAGS
   (BL_OPTION_METHOD, BL_OPTION_CANDIDATE, ...). */
int cli_model_option_has (int c, unsigned flags);

typedef struct cli_model {
  bl_job job;
  bl_terms *terms, *offset;
  bl_table *table;
  bl_design *design;
} cli_model;

void cli_model_init (cli_model *m);
void cli_model_free (cli_model *m);
/* Handle option C with argument ARG: 0 handled, -1 not a shared option, or EXIT_USAGE with
   the message printed (CMD names the subcommand for the hint). */
int cli_model_option (cli_model *m, int c, const char *arg, const char *cmd);
/* After the options: take DATA from the positional arguments and check the combination.
   0, or EXIT_USAGE with the message printed. */
int cli_model_finish (cli_model *m, int argc, char **argv, int optind_, const char *cmd);
/* Parse the terms (syntax first), read the table, build the design.  0, or an exit code with
   the library's message printed. */
int cli_model_load (cli_model *m, const char *cmd);
/* Run M's loaded job as TASK through bl_job_run, with the SIGINT flag as its cancel flag,
   SEED, BY (diagnose's --by, may be NULL) and SMALL (fit's smaller model, may be NULL):
   bl_job_run's status, with *RES and ERR as it leaves them. */
int cli_model_run (const cli_model *m, bl_job_task task, unsigned long seed, const char *by,
                   const bl_terms *small, bl_job_result **res, bl_err *err);
/* The same, keeping column ALSO of the data as well (see bl_job_load_with). */
int cli_model_load_with (cli_model *m, const char *cmd, const char *also);
/* The options every modelling subcommand ends its option switch with: -h (HEAD, the shared
   options' help from the option table, and TAIL on stdout, EXIT_DONE), a missing value and
   an unknown option (EXIT_USAGE).  Frees M and returns the exit code. */
int cli_model_option_end (cli_model *m, int c, const char *cmd, char **argv, const char *head,
                          const char *tail);

/* Print the design's drop counts and the given warnings as warnings on stderr. */
void cli_model_warn_drops (const cli_model *m);

#endif
