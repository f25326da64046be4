/* model_opts.h -- the options every modelling subcommand shares (data, terms, model,
   numerics), parsed once and turned into a table and a design. */
#ifndef BALLAST_MODEL_OPTS_H
#define BALLAST_MODEL_OPTS_H
#include <getopt.h>
#include "ballast.h"


enum {
  OPT_RESPONSE = 256, OPT_TERMS, OPT_NO_INTERCEPT, OPT_METHOD, OPT_FAMILY, OPT_LINK,
  OPT_WEIGHTS, OPT_OFFSET, OPT_CATEGORICAL, OPT_REFERENCE, OPT_DISPERSION, OPT_LEVEL,
  OPT_DELIMITER, OPT_DECIMAL_COMMA, OPT_MAX_ITER, OPT_EPSILON, OPT_SOLVER, OPT_THREADS,
  OPT_VARIANCE, OPT_TRANSFORM, OPT_SHIFT, OPT_SE, OPT_THETA, OPT_POWER, OPT_AGAINST,
  OPT_CLUSTER,
  OPT_FIRST_OWN = 400           /* subcommands number their own options from here */
};

/* The shared long options, to be followed by a subcommand's own and a zero entry. */
#define CLI_MODEL_LONG_OPTS \
  { "response", required_argument, NULL, OPT_RESPONSE }, \
  { "terms", required_argument, NULL, OPT_TERMS }, \
  { "no-intercept", no_argument, NULL, OPT_NO_INTERCEPT }, \
  { "method", required_argument, NULL, OPT_METHOD }, \
  { "family", required_argument, NULL, OPT_FAMILY }, \
  { "link", required_argument, NULL, OPT_LINK }, \
  { "weights", required_argument, NULL, OPT_WEIGHTS }, \
  { "offset", required_argument, NULL, OPT_OFFSET }, \
  { "categorical", required_argument, NULL, OPT_CATEGORICAL }, \
  { "reference", required_argument, NULL, OPT_REFERENCE }, \
  { "dispersion", required_argument, NULL, OPT_DISPERSION }, \
  { "level", required_argument, NULL, OPT_LEVEL }, \
  { "delimiter", required_argument, NULL, OPT_DELIMITER }, \
  { "decimal-comma", no_argument, NULL, OPT_DECIMAL_COMMA }, \
  { "max-iter", required_argument, NULL, OPT_MAX_ITER }, \
  { "epsilon", required_argument, NULL, OPT_EPSILON }, \
  { "solver", required_argument, NULL, OPT_SOLVER }, \
  { "threads", required_argument, NULL, OPT_THREADS }, \
  { "variance", required_argument, NULL, OPT_VARIANCE }, \
  { "transform", required_argument, NULL, OPT_TRANSFORM }, \
  { "shift", required_argument, NULL, OPT_SHIFT }, \
  { "se", required_argument, NULL, OPT_SE }, \
  { "theta", required_argument, NULL, OPT_THETA }, \
  { "power", required_argument, NULL, OPT_POWER }, \
  { "against", required_argument, NULL, OPT_AGAINST }, \
  { "cluster", required_argument, NULL, OPT_CLUSTER }

/* Help text for the shared options. */
extern const char cli_model_help[];

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
/* The same, keeping column ALSO of the data as well (see bl_job_load_with). */
int cli_model_load_with (cli_model *m, const char *cmd, const char *also);
/* The options every modelling subcommand ends its option switch with: -h (HEAD, the shared
   help and TAIL on stdout, EXIT_DONE), a missing value and an unknown option (EXIT_USAGE).
   Frees M and returns the exit code. */
int cli_model_option_end (cli_model *m, int c, const char *cmd, char **argv, const char *head,
                          const char *tail);

/* Print the design's drop counts and the given warnings as warnings on stderr. */
void cli_model_warn_drops (const cli_model *m);

#endif
