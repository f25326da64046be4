/* spec.h -- the batch spec file: a [defaults] section and one [job NAME] section per job.

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
   job without data or response, and a job with both candidates and single-model keys
   (bl_job_finish).  A missing data file is not a spec error: it is found when the job runs. */
#ifndef BALLAST_SPEC_H
#define BALLAST_SPEC_H
#include <stddef.h>
#include "error.h"
#include "job.h"
#ifdef __cplusplus
extern "C" {
#endif

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
int bl_spec_name_ok (const char *name);

/* Read and check PATH.  NULL with ERR filled: BL_EIO (cannot read the file), BL_ESPEC (see
   above), BL_ENOMEM. */
bl_spec *bl_spec_read (const char *path, bl_err *err);
/* The same from memory; NAME is used in messages and DIR resolves relative data paths. */
bl_spec *bl_spec_read_mem (const char *text, size_t len, const char *name, const char *dir,
                           bl_err *err);
void bl_spec_free (bl_spec *s);

size_t bl_spec_njobs (const bl_spec *s);
const bl_spec_job *bl_spec_get (const bl_spec *s, size_t i);   /* in file order */
/* The spec's file name without folder and extension ("demo" for data/demo.spec). */
const char *bl_spec_stem (const bl_spec *s);

#ifdef __cplusplus
}
#endif
#endif
