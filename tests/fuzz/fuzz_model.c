/* fuzz_model.c -- libFuzzer harness for the saved-model reader (model.h: bl_model_read).

   bl_model_read takes a path, so each input is written to one temporary file of this process
   (created at start-up and unlinked at once; it is reached as /proc/self/fd/N, or by its name
   where /proc is missing) and read from there.  On success the harness walks the accessors
   (every label, the coefficients and the p x p covariance, which AddressSanitizer checks are
   as long as bl_model_p says) and bl_model_table_opts; the level must be in (0, 1), and the
   covariance must be what model_check.c promises (null exactly where a coefficient is
   aliased, variances >= 0, symmetric, correlations in [-1, 1]).  On
   failure the code must be BL_EDATA (or BL_ENOMEM) with a message.  Any violation abort()s.
   Everything allocated is freed: the harness runs under LeakSanitizer. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <gsl/gsl_errno.h>
#include "model.h"
#include "table.h"

int LLVMFuzzerInitialize (int *argc, char ***argv);
int LLVMFuzzerTestOneInput (const uint8_t *data, size_t size);

static int tmp_fd = -1;               /* the process's one temporary file */
static char tmp_path[64];

static void
fail (const char *what, const char *detail)
{
  fprintf (stderr, "fuzz_model: %s: %s\n", what, detail);
  abort ();
}

int
LLVMFuzzerInitialize (int *argc, char ***argv)
{
  /* in memory where the system has a tmpfs: rewriting a disk file for every input made the
     harness wait on the disk (measured: about 600 inputs per second instead of 3000) */
  char name[] = "/dev/shm/fuzz_model.XXXXXX", disk[] = "/tmp/fuzz_model.XXXXXX";
  char *used = name;
  (void) argc;
  (void) argv;
  gsl_set_error_handler_off ();       /* as the ballast program does */
  tmp_fd = mkstemp (name);
  if (tmp_fd < 0) {
    used = disk;
    tmp_fd = mkstemp (disk);
  }
  if (tmp_fd < 0)
    fail ("init", "cannot create a temporary file");
  snprintf (tmp_path, sizeof tmp_path, "/proc/self/fd/%d", tmp_fd);
  if (access (tmp_path, R_OK) == 0)
    unlink (used);
  else
    snprintf (tmp_path, sizeof tmp_path, "%s", used);   /* left behind: no /proc */
  return 0;
}

/* Replace the temporary file's contents with DATA; returns its path. */
static const char *
put_file (const uint8_t *data, size_t size)
{
  size_t done = 0;
  if (tmp_fd < 0)
    LLVMFuzzerInitialize (NULL, NULL);
  if (ftruncate (tmp_fd, 0) != 0)
    fail ("put_file", "ftruncate failed");
  while (done < size) {
    const ssize_t k = pwrite (tmp_fd, data + done, size - done, (off_t) done);
    if (k <= 0)
      fail ("put_file", "write failed");
    done += (size_t) k;
  }
  return tmp_path;
}

int
LLVMFuzzerTestOneInput (const uint8_t *data, size_t size)
{
  bl_err err = { 0 };
  bl_model *m = bl_model_read (put_file (data, size), &err);
  bl_table_opts o;
  volatile double sink = 0.0;
  size_t p, j;

  if (!m) {
    if ((err.code != BL_EDATA && err.code != BL_ENOMEM) || !err.msg[0]) {
      char d[1700];
      snprintf (d, sizeof d, "code %d at %s: %s", err.code, err.where, err.msg);
      fail ("read", d);
    }
    return 0;
  }
  p = bl_model_p (m);
  if (p == 0)
    fail ("read", "a model with no columns accepted");
  for (j = 0; j < p; j++) {
    if (!bl_model_label (m, j))
      fail ("read", "a column without a label");
    sink += bl_model_beta (m)[j];
    for (size_t k = 0; k < p; k++)
      sink += bl_model_cov (m)[j + k * p];
  }
  if (bl_model_label (m, p) != NULL)
    fail ("read", "a label past the last column");
  /* what model_check.c guarantees of an accepted covariance (doc/model-format.md): null
     exactly in aliased rows and columns, variances >= 0, symmetric within 1e-12 max|V|,
     correlations within [-1, 1] up to 1e-10 */
  {
    const double *b = bl_model_beta (m), *V = bl_model_cov (m);
    double vmax = 0.0;
    for (j = 0; j < p * p; j++)
      if (!isnan (V[j]))
        vmax = fmax (vmax, fabs (V[j]));
    for (j = 0; j < p; j++)
      for (size_t k = 0; k < p; k++) {
        const double v = V[j + k * p];
        if (isnan (v) != (isnan (b[j]) || isnan (b[k])))
          fail ("read", "a null covariance not matching the aliased coefficients");
        if (isnan (v))
          continue;
        if (j == k && v < 0.0)
          fail ("read", "a negative variance accepted");
        if (fabs (v - V[k + j * p]) > 1e-12 * vmax)
          fail ("read", "an asymmetric covariance accepted");
        if (j != k && V[j + j * p] > 0.0 && V[k + k * p] > 0.0
            && fabs (v) / (sqrt (V[j + j * p]) * sqrt (V[k + k * p])) > 1.0 + 1e-10)
          fail ("read", "a correlation outside [-1, 1] accepted");
      }
  }
  if (!bl_model_response (m))
    fail ("read", "no response");
  if (!(bl_model_level (m) > 0.0 && bl_model_level (m) < 1.0))
    fail ("read", "level outside (0, 1) accepted");
  bl_table_opts_init (&o);
  bl_model_table_opts (m, &o);
  for (j = 0; j < o.n_categorical; j++)
    if (!o.categorical[j])
      fail ("read", "a NULL categorical column name");
  (void) sink;
  bl_model_free (m);
  return 0;
}
