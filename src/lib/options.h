/* options.h -- the one table of a job's keys.

   Each entry names a key ("family": the spec key and the long option --family), says whether
   it takes a value, where it is accepted and what it means to the commands, holds the setter
   that reads the value into a bl_job, and carries its lines of --help.  Everything that lists
   the keys reads this table: bl_job_set (job.h) looks a key up here and calls its setter; the
   spec parser accepts exactly these keys; the CLI builds the getopt options of fit, diagnose
   and compare and the --help of their shared options from it; tests/check_options.c checks
   the key lists of doc/cli.md and doc/spec-format.md against it.  Not installed: a library
   user sets keys through bl_job_set. */
#ifndef BALLAST_OPTIONS_H
#define BALLAST_OPTIONS_H
#include <stddef.h>
#include "error.h"
#include "job.h"                 /* the BL_OPTION_ flags */
#ifdef __cplusplus
extern "C" {
#endif

struct bl_job;                     /* job.h */


typedef enum bl_option_kind {
  BL_OPTION_VALUE = 0,             /* one value: --KEY VALUE on the command line, key = VALUE */
  BL_OPTION_FLAG                   /* no value on the command line (--KEY; set to yes); in a
                                      spec, key = yes|no|true|false|1|0 */
} bl_option_kind;

typedef struct bl_option bl_option;

/* Read VALUE into J.  VALUE is NULL only for a flag given without a value (the command
   line's --KEY).  BL_OK; BL_ESPEC with ERR->where = WHERE and a message quoting VALUE;
   BL_ENOMEM. */
typedef int (*bl_option_setter) (struct bl_job *j, const bl_option *o, const char *value,
                                 const char *where, bl_err *err);

struct bl_option {
  const char *key;                 /* lower case, with hyphens */
  bl_option_kind kind;
  unsigned flags;                  /* BL_OPTION_... */
  bl_option_setter set;
  size_t field;                    /* offsetof (bl_job, ...) for the setters shared by several
                                      keys (strings, flags); 0 otherwise */
  /* --help: the section ("model", "input", "numerics") the option is listed under, the
     value's placeholder after --KEY (NULL for a flag), and the text, lines separated by
     '\n' and without the last one.  All NULL for a key that is not a shared option. */
  const char *group, *arg, *help;
};

/* The keys in table order (the order of --help): I < bl_option_count (). */
size_t bl_option_count (void);
const bl_option *bl_option_at (size_t i);
/* The entry of KEY (exact, case-sensitive), or NULL. */
const bl_option *bl_option_find (const char *key);
/* The index of O in the table. */
size_t bl_option_index (const bl_option *o);

#ifdef __cplusplus
}
#endif
#endif
