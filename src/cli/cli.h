/* cli.h -- what every subcommand shares: messages, exit codes, atomic output files. */
#ifndef BALLAST_CLI_H
#define BALLAST_CLI_H
#include <signal.h>
#include <stdio.h>
#include "error.h"

/* Exit codes, everywhere in the tool (documented in README.md and doc/cli.md).
   EXIT_INTERRUPTED is the shell's 128 + SIGINT: the command was stopped by an interrupt. */
enum { EXIT_DONE = 0, EXIT_DATA = 1, EXIT_USAGE = 2, EXIT_INTERRUPTED = 130 };

/* Set by the SIGINT handler; long library operations poll it. */
extern volatile sig_atomic_t cli_cancel;

/* "ballast: CMD: interrupted" on stderr (once per process, however often it is called);
   returns EXIT_INTERRUPTED.  Called when cli_cancel is set, before anything is written. */
int cli_interrupted (const char *cmd);

/* "ballast: WHERE: message" on stderr (WHERE may be NULL or empty). */
void cli_error (const char *where, const char *fmt, ...)
  __attribute__ ((format (printf, 2, 3)));
void cli_warn (const char *where, const char *fmt, ...)
  __attribute__ ((format (printf, 2, 3)));
/* A usage error: the message, then "see 'ballast CMD --help'"; returns EXIT_USAGE. */
int cli_usage_error (const char *cmd, const char *where, const char *fmt, ...)
  __attribute__ ((format (printf, 3, 4)));
/* Print a library error and return the exit code for it: 2 for BL_ESPEC (a usage error: the
   hint "see 'ballast CMD --help'" follows), EXIT_INTERRUPTED for BL_ECANCEL or any error
   after SIGINT (then only "interrupted" is printed: the error is its consequence), else 1. */
int cli_lib_error (const char *cmd, const bl_err *err);

/* An output that is written to a temporary file beside PATH and renamed over PATH when
   complete ("-" or NULL is standard output, written directly; so is a PATH that is, or is a
   symbolic link to, the file open as standard output, such as /dev/stdout).  A PATH that is
   (or links to) a device, a FIFO, a socket or a terminal (/dev/null) is written in place,
   which a rename would replace by a regular file. */
typedef struct cli_out {
  FILE *f;
  char path[4096], tmp[4096];
  int is_stdout;
  int is_direct;              /* PATH is a device or a pipe: written in place */
} cli_out;
/* Check output PATH of option OPT (NULL: standard output) before any work: an empty name, a
   folder, a symbolic link to a regular file, a folder or nothing (a rename would replace
   the link) are usage errors (EXIT_USAGE, message printed, CMD's hint); a folder in which
   no file can be made (a temporary is created and removed) is EXIT_DATA; else 0. */
int cli_out_check (const char *cmd, const char *opt, const char *path);
/* Whether PATH is written as standard output (cli_out_open's rule). */
int cli_out_to_stdout (const char *path);
int cli_out_open (cli_out *o, const char *path);      /* 0, or -1 with a message printed */
int cli_out_commit (cli_out *o);                      /* fsync + rename; 0 or -1 */
/* cli_out_commit refuses (-1, the temporary removed, no message) once cli_cancel is set: an
   interrupted command leaves no file of its own behind.  Every write, flush and close is
   checked; a failed one is named ("ballast: PATH: write failed: REASON"). */
void cli_out_abort (cli_out *o);                      /* remove the temporary */
/* Commit the N outputs of one command together, written and not yet committed, in order,
   with SIGINT held off: a signal either comes first (cli_cancel set: every one refused, none
   written) or after the last rename, never between two of them.  After a failed one the
   rest are aborted.  0 or -1. */
int cli_out_commit_all (cli_out *const *o, size_t n);
/* A writer failed on O with ERR (ERRNO_ the errno it left): O is aborted; a failed write
   (BL_EIO) is reported as O's ("PATH: write failed: REASON"), anything else through
   cli_lib_error.  Returns the exit code. */
int cli_out_fail (cli_out *o, const char *cmd, const bl_err *err, int errno_);
/* The name of O in messages: its path, or "standard output". */
const char *cli_out_name (const cli_out *o);

/* The files one command reads and writes, for cli_paths_check. */
typedef struct cli_path {
  const char *label;          /* "DATA", "--output", ... */
  const char *path;           /* "-": standard input (an input) or output (an output) */
  int output;
} cli_path;
/* Whether any output of P[0..N) is the same file as an input or another output
   (bl_path_set_check); entries with a NULL path are skipped.  0, or EXIT_USAGE with the
   message and CMD's hint printed (EXIT_DATA when memory ran out). */
int cli_paths_check (const char *cmd, const cli_path *p, size_t n);

/* Parse a whole string as a finite double / a positive size; 0 on success. */
int cli_parse_double (const char *s, double *out);
int cli_parse_size (const char *s, size_t *out);

#endif
