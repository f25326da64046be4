/* fuzz_predict.c -- libFuzzer harness for predict's new-data path: bl_model_read, then
   bl_table_read_mem with the model's table options, bl_model_predict and
   bl_prediction_write_csv.

   Input: when the first byte is '{', the input is a model file up to the first line "==",
   and the new data after it ("{...}\n==\nsite,age\n..."); otherwise the first byte picks
   one of the models fitted at start-up (byte value modulo their count) and the rest is the
   new data.  The start-up models are fitted to an invented pump fleet (site, duty, age, load,
   hours, stops, repair, amount, w; GSL's MT19937 with a fixed seed), written with
   bl_model_write and read back with bl_model_read, so they are what ballast itself saves:
   every family, link, transform and variance function, offsets, weights and categorical
   levels.  With FUZZ_PREDICT_DUMP=DIR set, start-up also writes them to DIR/model-K.json
   (seeds for fuzz_model).

   Checked: a prediction has one row per table row, mean_lo <= mean <= mean_hi where all
   three are finite and the score counts are consistent; a failure has a message and a code
   of predict's (BL_EDATA, BL_ESPEC, BL_ENOMEM).  Any violation abort()s.  Everything
   allocated is freed: the harness runs under LeakSanitizer. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_randist.h>
#include "design.h"
#include "fit.h"
#include "model.h"
#include "table.h"
#include "terms.h"

int LLVMFuzzerInitialize (int *argc, char ***argv);
int LLVMFuzzerTestOneInput (const uint8_t *data, size_t size);

#define TRAIN_ROWS 60

typedef struct builtin {
  const char *resp, *terms, *offset, *weights;
  bl_method method;
  const char *fam, *link;
  bl_transform tr;
  int lambda_est;
  bl_variance var;
  const char *var_col;
  int power_est;
  double power;
} builtin;

static const builtin builtins[] = {
  { "stops", "age,site", "log(hours)", NULL, BL_METHOD_GLM, "poisson", "log",
    BL_TRANSFORM_NONE, 0, BL_VARIANCE_NONE, NULL, 0, 0.0 },
  { "repair", "age,pow(load,2),duty", NULL, "w", BL_METHOD_GLM, "gamma", "log",
    BL_TRANSFORM_NONE, 0, BL_VARIANCE_NONE, NULL, 0, 0.0 },
  { "repair", "age,site", NULL, NULL, BL_METHOD_GLM, "inverse-gaussian", "log",
    BL_TRANSFORM_NONE, 0, BL_VARIANCE_NONE, NULL, 0, 0.0 },
  { "amount", "age,load,site", NULL, NULL, BL_METHOD_OLS, "gaussian", "identity",
    BL_TRANSFORM_BOXCOX, 1, BL_VARIANCE_NONE, NULL, 0, 0.0 },
  { "amount", "age,sqrt(load)", NULL, "w", BL_METHOD_WLS, "gaussian", "identity",
    BL_TRANSFORM_NONE, 0, BL_VARIANCE_COLUMN, "load", 0, 1.7 },
  { "repair", "exp(load),cross(site,duty)", NULL, NULL, BL_METHOD_OLS, "gaussian",
    "identity", BL_TRANSFORM_LOG, 0, BL_VARIANCE_NONE, NULL, 0, 0.0 },
  { "amount", "age,load,cross(age,load)", NULL, "w", BL_METHOD_GLM, "gaussian", "identity",
    BL_TRANSFORM_NONE, 0, BL_VARIANCE_NONE, NULL, 0, 0.0 },
  { "amount", "age,duty", NULL, NULL, BL_METHOD_WLS, "gaussian", "identity",
    BL_TRANSFORM_NONE, 0, BL_VARIANCE_FITTED, NULL, 1, 0.0 },
  { "repair", "age,load", NULL, NULL, BL_METHOD_GLM, "gamma", "inverse",
    BL_TRANSFORM_NONE, 0, BL_VARIANCE_NONE, NULL, 0, 0.0 },
  { "repair", "age,[load],site", NULL, NULL, BL_METHOD_OLS, "gaussian", "identity",
    BL_TRANSFORM_SQRT, 0, BL_VARIANCE_NONE, NULL, 0, 0.0 },
  { "stops", "log(age),duty", NULL, NULL, BL_METHOD_GLM, "poisson", "identity",
    BL_TRANSFORM_NONE, 0, BL_VARIANCE_NONE, NULL, 0, 0.0 },
};
#define NB (sizeof builtins / sizeof builtins[0])

static bl_model *models[NB];
static int tmp_fd = -1;
static char tmp_path[64];

static void
fail (const char *what, const char *detail)
{
  fprintf (stderr, "fuzz_predict: %s: %s\n", what, detail);
  abort ();
}

static void
put_file (const void *data, size_t size)
{
  size_t done = 0;
  if (ftruncate (tmp_fd, 0) != 0)
    fail ("put_file", "ftruncate failed");
  while (done < size) {
    const ssize_t k = pwrite (tmp_fd, (const char *) data + done, size - done, (off_t) done);
    if (k <= 0)
      fail ("put_file", "write failed");
    done += (size_t) k;
  }
}

/* The training table: an invented pump fleet. */
static char *
train_csv (void)
{
  static const char *const sites[] = { "east-wharf", "kiln-road", "mill-lane", "north-quay" };
  static const char *const duties[] = { "heavy", "light", "standard" };
  gsl_rng *r = gsl_rng_alloc (gsl_rng_mt19937);
  const size_t cap = 128 * (TRAIN_ROWS + 1);
  char *s = malloc (cap);
  size_t n;
  if (!r || !s)
    abort ();
  gsl_rng_set (r, 20260417);
  n = (size_t) snprintf (s, cap, "site,duty,age,load,hours,stops,repair,amount,w\n");
  for (size_t i = 0; i < TRAIN_ROWS; i++) {
    const size_t si = i % 4, du = (i / 4) % 3;
    const double age = 0.5 + 14.0 * gsl_rng_uniform (r);
    const double load = 0.3 + 0.65 * gsl_rng_uniform (r);
    const double hours = 200.0 + 900.0 * gsl_rng_uniform (r);
    const double mu_s = hours * exp (-5.1 + 0.083 * age + 0.1 * (double) si + 0.9 * load);
    const double mu_r = exp (0.71 + 0.046 * age + 0.53 * log (load) - 0.12 * (double) du);
    const double mu_a = 3.2 + 0.41 * age + 2.3 * load;
    n += (size_t) snprintf (s + n, cap - n, "%s,%s,%.6g,%.4g,%.5g,%u,%.6g,%.6g,%.4g\n",
                            sites[si], duties[du], age, load, hours,
                            gsl_ran_poisson (r, mu_s), gsl_ran_gamma (r, 2.7, mu_r / 2.7),
                            mu_a + gsl_ran_gaussian (r, 0.35 * pow (mu_a, 0.8)),
                            0.5 + 1.5 * gsl_rng_uniform (r));
  }
  gsl_rng_free (r);
  return s;
}

static bl_model *
fit_builtin (const bl_table *t, const builtin *b, size_t k)
{
  bl_err err = { 0 };
  bl_fit_opts fo;
  bl_design_opts dopt;
  bl_terms *terms = bl_terms_parse (b->terms, "--terms", &err), *off = NULL;
  bl_design *d;
  bl_fit *f;
  bl_model *m;
  FILE *out;
  char msg[1700];
  if (b->offset)
    off = bl_terms_parse (b->offset, "--offset", &err);
  if (!terms || (b->offset && !off))
    fail ("init", err.msg);
  bl_fit_opts_init (&fo);
  fo.method = b->method;
  fo.fam = bl_family_find (b->fam);
  fo.link = bl_link_find (b->link);
  fo.transform = b->tr;
  fo.lambda_est = b->lambda_est;
  fo.variance = b->var;
  fo.variance_col = b->var_col;
  fo.power_est = b->power_est;
  fo.power = b->power;
  bl_design_opts_init (&dopt);
  dopt.offset = off;
  dopt.weights = b->weights;
  dopt.variance = b->var == BL_VARIANCE_COLUMN ? b->var_col : NULL;
  if (!(d = bl_design_new (t, b->resp, terms, &dopt, &err))
      || !(f = bl_fit_new (d, &fo, &err))) {
    snprintf (msg, sizeof msg, "model %zu: %s: %s", k, err.where, err.msg);
    fail ("init", msg);
  }
  out = fdopen (dup (tmp_fd), "w+");
  if (!out || ftruncate (tmp_fd, 0) != 0 || lseek (tmp_fd, 0, SEEK_SET) != 0)
    fail ("init", "cannot write the model");
  if (bl_model_write (out, f, terms, off, b->weights, &err) != BL_OK || fclose (out) != 0)
    fail ("init", err.msg);
  if (getenv ("FUZZ_PREDICT_DUMP")) {
    char path[512], *buf;
    FILE *in = fopen (tmp_path, "rb"), *dump;
    long len;
    snprintf (path, sizeof path, "%s/model-%zu.json", getenv ("FUZZ_PREDICT_DUMP"), k);
    if (!in || fseek (in, 0, SEEK_END) != 0 || (len = ftell (in)) < 0)
      abort ();
    rewind (in);
    buf = malloc ((size_t) len + 1);
    if (!buf || fread (buf, 1, (size_t) len, in) != (size_t) len || !(dump = fopen (path, "wb")))
      abort ();
    fwrite (buf, 1, (size_t) len, dump);
    fclose (dump);
    fclose (in);
    free (buf);
  }
  if (!(m = bl_model_read (tmp_path, &err))) {
    snprintf (msg, sizeof msg, "model %zu read back: %s: %s", k, err.where, err.msg);
    fail ("init", msg);
  }
  bl_fit_free (f);
  bl_design_free (d);
  bl_terms_free (terms);
  bl_terms_free (off);
  return m;
}

static void
free_models (void)
{
  for (size_t k = 0; k < NB; k++)
    bl_model_free (models[k]);
}

int
LLVMFuzzerInitialize (int *argc, char ***argv)
{
  /* in memory where the system has a tmpfs (see fuzz_model.c) */
  char name[] = "/dev/shm/fuzz_predict.XXXXXX", disk[] = "/tmp/fuzz_predict.XXXXXX";
  char *used = name;
  bl_err err = { 0 };
  bl_table *t;
  char *csv;
  (void) argc;
  (void) argv;
  if (tmp_fd >= 0)
    return 0;
  gsl_set_error_handler_off ();       /* as the ballast program does */
  if ((tmp_fd = mkstemp (name)) < 0 && (tmp_fd = mkstemp (used = disk)) < 0)
    fail ("init", "cannot create a temporary file");
  snprintf (tmp_path, sizeof tmp_path, "/proc/self/fd/%d", tmp_fd);
  if (access (tmp_path, R_OK) == 0)
    unlink (used);
  else
    snprintf (tmp_path, sizeof tmp_path, "%s", used);
  csv = train_csv ();
  if (!(t = bl_table_read_mem (csv, strlen (csv), "train.csv", NULL, &err)))
    fail ("init", err.msg);
  for (size_t k = 0; k < NB; k++)
    models[k] = fit_builtin (t, &builtins[k], k);
  bl_table_free (t);
  free (csv);
  atexit (free_models);
  return 0;
}

static void
check_prediction (const bl_prediction *p, const bl_table *t)
{
  if (p->n != bl_table_nrows (t))
    fail ("predict", "not one prediction per row");
  for (size_t i = 0; i < p->n; i++) {
    const double m = p->mean[i], lo = p->mean_lo[i], hi = p->mean_hi[i];
    const double tol = 1e-9 * fabs (m) + 1e-300;
    if (isnan (m)) {
      char d[80];
      snprintf (d, sizeof d, "row %zu: the mean is NAN", i);
      fail ("predict", d);
    }
    if (isfinite (lo) && isfinite (hi) && isfinite (m) && !(lo <= m + tol && m - tol <= hi)) {
      char d[200];
      snprintf (d, sizeof d, "row %zu: mean %.17g outside [%.17g, %.17g]", i, m, lo, hi);
      fail ("predict", d);
    }
  }
  if (p->has_response != (p->n_scored > 0) || p->n_scored > p->n)
    fail ("predict", "score counts inconsistent");
}

static void
predict_on (const bl_model *m, const uint8_t *csv, size_t len)
{
  bl_err err = { 0 };
  bl_table_opts o;
  bl_table *t;
  bl_prediction *p;
  bl_table_opts_init (&o);
  o.threads = 1;
  bl_model_table_opts (m, &o);
  if (!(t = bl_table_read_mem (csv, len, "new.csv", &o, &err)))
    return;
  p = bl_model_predict (m, t, 0.0, &err);
  if (p) {
    FILE *null = fopen ("/dev/null", "w");
    const char *keep[3];
    size_t nkeep = 0;
    check_prediction (p, t);
    for (size_t j = bl_table_ncols (t); j-- > 0 && nkeep < 3;)
      keep[nkeep++] = bl_table_colname (t, j);
    if (null) {
      bl_err e2 = { 0 };
      bl_prediction_csv_opts copt;
      bl_prediction_csv_opts_init (&copt);
      copt.keep = keep;
      copt.nkeep = nkeep;
      (void) bl_prediction_write_csv (null, p, t, &copt, &e2);
      fclose (null);
    }
    bl_prediction_free (p);
  } else if ((err.code != BL_EDATA && err.code != BL_ESPEC && err.code != BL_ENOMEM)
             || !err.msg[0]) {
    char d[1700];
    snprintf (d, sizeof d, "code %d at %s: %s", err.code, err.where, err.msg);
    fail ("predict", d);
  }
  bl_table_free (t);
}

int
LLVMFuzzerTestOneInput (const uint8_t *data, size_t size)
{
  if (tmp_fd < 0)
    LLVMFuzzerInitialize (NULL, NULL);
  if (size == 0)
    return 0;
  if (data[0] == '{') {
    const uint8_t *sep = NULL;
    size_t mlen = size;
    bl_err err = { 0 };
    bl_model *m;
    for (size_t i = 0; i + 4 <= size; i++)
      if (memcmp (data + i, "\n==\n", 4) == 0) {
        sep = data + i;
        break;
      }
    if (sep)
      mlen = (size_t) (sep - data) + 1;
    put_file (data, mlen);
    if (!(m = bl_model_read (tmp_path, &err)))
      return 0;
    if (sep)
      predict_on (m, sep + 4, size - mlen - 3);
    bl_model_free (m);
    return 0;
  }
  predict_on (models[data[0] % NB], data + 1, size - 1);
  return 0;
}
