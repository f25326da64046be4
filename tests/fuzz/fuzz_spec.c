/* fuzz_spec.c -- libFuzzer harness for the batch spec file (spec.h: bl_spec_read_mem).

   The input is the whole spec file (not NUL-terminated: the reader takes a length, and
   AddressSanitizer catches a read past it).  Data paths resolve against a folder that does not
   exist, so nothing is read from disk.  On success the harness checks what spec.h and
   doc/spec-format.md promise of every job: a valid and case-insensitively unique name, data
   and response set, the data path under the folder, terms that parse, a header line inside
   the file; and it runs bl_job_copy and bl_job_clear on each job.  On failure the error must
   be BL_ESPEC (or BL_ENOMEM) with where "fuzz.spec:LINE".  Any violation abort()s.
   Everything allocated is freed: the harness runs under LeakSanitizer. */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <gsl/gsl_errno.h>
#include "job.h"
#include "terms.h"

#define DIR "/nonexistent-fuzz-dir"

int LLVMFuzzerInitialize (int *argc, char ***argv);
int LLVMFuzzerTestOneInput (const uint8_t *data, size_t size);

int
LLVMFuzzerInitialize (int *argc, char ***argv)
{
  (void) argc;
  (void) argv;
  gsl_set_error_handler_off ();       /* as the ballast program does */
  return 0;
}

static void
fail (const char *what, const char *detail)
{
  fprintf (stderr, "fuzz_spec: %s: %s\n", what, detail);
  abort ();
}

static size_t
count_lines (const uint8_t *data, size_t size)
{
  size_t n = 0;
  for (size_t i = 0; i < size; i++)
    n += data[i] == '\n';
  return n + 1;
}

int
LLVMFuzzerTestOneInput (const uint8_t *data, size_t size)
{
  bl_err err = { 0 };
  bl_spec *s = bl_spec_read_mem ((const char *) data, size, "fuzz.spec", DIR, &err);
  const size_t nlines = count_lines (data, size);
  size_t i, k;

  if (!s) {
    unsigned long line = 0;
    char tail;
    if (err.code != BL_ESPEC && err.code != BL_ENOMEM) {
      char d[1700];
      snprintf (d, sizeof d, "code %d at %s: %s", err.code, err.where, err.msg);
      fail ("read", d);
    }
    if (err.code == BL_ESPEC
        && (strncmp (err.where, "fuzz.spec:", 10) != 0
            || sscanf (err.where + 10, "%lu%c", &line, &tail) != 1 || line < 1
            || line > nlines)) {
      char d[1700];
      snprintf (d, sizeof d, "where '%s' is not fuzz.spec:LINE within %zu lines (%s)",
                err.where, nlines, err.msg);
      fail ("read", d);
    }
    if (!err.msg[0])
      fail ("read", "an error without a message");
    return 0;
  }
  if (bl_spec_njobs (s) == 0 || bl_spec_njobs (s) > BL_SPEC_MAX_JOBS)
    fail ("read", "job count out of range");
  (void) bl_spec_stem (s);
  for (i = 0; i < bl_spec_njobs (s); i++) {
    const bl_spec_job *j = bl_spec_get (s, i);
    bl_terms *terms = NULL, *offset = NULL;
    bl_job copy;
    if (!bl_spec_name_ok (j->name))
      fail ("job", "an invalid name accepted");
    for (k = 0; k < i; k++)
      if (strcasecmp (bl_spec_get (s, k)->name, j->name) == 0)
        fail ("job", "names equal ignoring case accepted");
    if (j->line < 1 || j->line > nlines)
      fail ("job", "header line outside the file");
    if (!j->job.data || !j->job.response)
      fail ("job", "a job without data or response accepted");
    if (j->job.data[0] != '/')
      fail ("job", "data path not resolved against the folder");
    if (bl_job_parse_terms (&j->job, "fuzz.spec:1", &terms, &offset, &err) != BL_OK)
      fail ("job", "terms accepted by the reader do not parse");
    bl_terms_free (terms);
    bl_terms_free (offset);
    bl_job_init (&copy);
    if (bl_job_copy (&copy, &j->job, &err) != BL_OK)
      fail ("job", "bl_job_copy failed");
    bl_job_clear (&copy);
  }
  bl_spec_free (s);
  return 0;
}
