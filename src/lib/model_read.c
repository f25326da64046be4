/* model_read.c -- a saved model read back with Jansson and checked (bl_model_read), its
   accessors, bl_model_table_opts and bl_model_free.

   Every key of doc/model-format.md is required and type-checked; an error names the file
   and the key.  The model read back (struct bl_model, model_impl.h) is what predict.c uses. */
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <jansson.h>
#include "alloc.h"
#include "model_impl.h"

void
bl_model_free (bl_model *m)
{
  if (!m)
    return;
  bl_free (m->path);
  bl_free (m->response);
  bl_free (m->weights);
  bl_free (m->var_col);
  bl_terms_free (m->terms);
  bl_terms_free (m->offset);
  for (size_t i = 0; m->cat && i < m->ncat; i++) {
    bl_free (m->cat[i].column);
    bl_free (m->cat[i].reference);
    for (size_t k = 0; m->cat[i].levels && k < m->cat[i].nlevels; k++)
      bl_free (m->cat[i].levels[k]);
    bl_free (m->cat[i].levels);
  }
  bl_free (m->cat);
  bl_free (m->dl);
  bl_free ((void *) m->catnames);
  for (size_t j = 0; m->labels && j < m->p; j++)
    bl_free (m->labels[j]);
  bl_free (m->labels);
  bl_free (m->beta);
  bl_free (m->cov);
  bl_free (m->res);
  bl_free (m->se_kind);
  bl_free (m);
}

/* State of one read: the file name for messages, the error record, and the JSON path of
   the object being read ("" at the top, "variance.", "categorical[2].") so that every
   message names the whole path of its key ('categorical[2].levels[1]', 'cov[3][0]'). */
typedef struct reader {
  const char *path;
  bl_err *err;
  int status;                     /* first error, else BL_OK */
  char pre[48];                   /* the path of the current object, with its '.' */
} reader;

/* Record that KEY (below the current object) is wrong (BL_EDATA, where = the file); returns
   NULL for convenience. */
static void *
bad (reader *r, const char *key, const char *what)
{
  if (r->status == BL_OK)
    r->status = bl_fail (r->err, BL_EDATA, r->path, "'%s%s': %s", r->pre, key, what);
  return NULL;
}

/* KEY[I] into BUF (an element's path, for bad). */
static const char *
elem (char *buf, size_t len, const char *key, size_t i)
{
  snprintf (buf, len, "%s[%zu]", key, i);
  return buf;
}

/* Enter the object at KEY (its element I when I is not (size_t) -1): messages then name
   its keys as "KEY.x" or "KEY[I].x". */
static void
enter (reader *r, const char *key, size_t i)
{
  if (i == (size_t) -1)
    snprintf (r->pre, sizeof r->pre, "%s.", key);
  else
    snprintf (r->pre, sizeof r->pre, "%s[%zu].", key, i);
}

static void
leave (reader *r)
{
  r->pre[0] = '\0';
}

static void *
nomem (reader *r)
{
  if (r->status == BL_OK)
    r->status = bl_fail (r->err, BL_ENOMEM, r->path, "out of memory reading the model");
  return NULL;
}

static json_t *
member (reader *r, const json_t *obj, const char *key)
{
  json_t *v = json_object_get (obj, key);
  return v ? v : bad (r, key, "missing");
}

/* A copy of the string at KEY (NULL allowed when NULLOK; then *OUT stays NULL). */
static int
get_str (reader *r, const json_t *obj, const char *key, int nullok, char **out)
{
  json_t *v = member (r, obj, key);
  *out = NULL;
  if (!v)
    return r->status;
  if (json_is_null (v) && nullok)
    return BL_OK;
  if (!json_is_string (v)) {
    bad (r, key, nullok ? "expected a string or null" : "expected a string");
    return r->status;
  }
  if (!(*out = bl_strdup (json_string_value (v))))
    nomem (r);
  return r->status;
}

/* The number at V (null is NAN when NULLOK). */
static int
num_of (reader *r, const json_t *v, const char *key, int nullok, double *out)
{
  if (v && json_is_null (v) && nullok) {
    *out = NAN;
    return BL_OK;
  }
  if (!v || !json_is_number (v)) {
    bad (r, key, nullok ? "expected a number or null" : "expected a number");
    return r->status;
  }
  *out = json_number_value (v);
  return BL_OK;
}

static int
get_num (reader *r, const json_t *obj, const char *key, int nullok, double *out)
{
  json_t *v = member (r, obj, key);
  return v ? num_of (r, v, key, nullok, out) : r->status;
}

static int
get_size (reader *r, const json_t *obj, const char *key, size_t *out)
{
  json_t *v = member (r, obj, key);
  if (!v)
    return r->status;
  if (!json_is_integer (v) || json_integer_value (v) < 0) {
    bad (r, key, "expected a non-negative integer");
    return r->status;
  }
  *out = (size_t) json_integer_value (v);
  return BL_OK;
}

static int
get_bool (reader *r, const json_t *obj, const char *key, int *out)
{
  json_t *v = member (r, obj, key);
  if (!v)
    return r->status;
  if (!json_is_boolean (v)) {
    bad (r, key, "expected true or false");
    return r->status;
  }
  *out = json_is_true (v);
  return BL_OK;
}

/* The array at KEY, of N elements when N is not 0 (0: any length). */
static json_t *
get_arr (reader *r, const json_t *obj, const char *key, size_t n)
{
  json_t *v = member (r, obj, key);
  char msg[80];
  if (!v)
    return NULL;
  if (!json_is_array (v))
    return bad (r, key, "expected an array");
  if (n && json_array_size (v) != n) {
    snprintf (msg, sizeof msg, "expected %zu entries, found %zu", n, json_array_size (v));
    return bad (r, key, msg);
  }
  return v;
}

/* The strings of array A (KEY for messages) joined by SEP into a new string. */
static char *
join_strings (reader *r, const json_t *a, const char *key, const char *sep)
{
  size_t len = 1, i;
  json_t *v;
  char *s;
  json_array_foreach (a, i, v) {
    char at[64];
    if (!json_is_string (v))
      return bad (r, elem (at, sizeof at, key, i), "expected a string");
    len += strlen (json_string_value (v)) + strlen (sep);
  }
  if (!(s = bl_malloc (len)))
    return nomem (r);
  s[0] = '\0';
  json_array_foreach (a, i, v) {
    if (i)
      strcat (s, sep);
    strcat (s, json_string_value (v));
  }
  return s;
}

static int
read_terms (reader *r, bl_model *m, const json_t *root)
{
  const json_t *a = get_arr (r, root, "terms", 0);
  char *text = NULL, *off = NULL;
  bl_err e;
  if (!a)
    return r->status;
  if (json_array_size (a) > 0) {
    if (!(text = join_strings (r, a, "terms", ", ")))
      return r->status;
    m->terms = bl_terms_parse (text, "terms", &e);
    bl_free (text);
    if (!m->terms) {
      if (e.code == BL_ENOMEM)
        return nomem (r), r->status;
      char msg[600];
      snprintf (msg, sizeof msg, "not valid terms (%s)", e.msg);
      return bad (r, "terms", msg), r->status;
    }
    if (bl_terms_count (m->terms) != json_array_size (a))
      return bad (r, "terms", "each entry must be one term"), r->status;
  }
  if (get_str (r, root, "offset", 1, &off) != BL_OK)
    return r->status;
  if (off) {
    m->offset = bl_terms_parse (off, "offset", &e);
    bl_free (off);
    if (!m->offset)
      return e.code == BL_ENOMEM ? (nomem (r), r->status)
                                 : (bad (r, "offset", "not a valid term"), r->status);
    if (bl_terms_count (m->offset) != 1)
      return bad (r, "offset", "expected one term"), r->status;
  }
  return BL_OK;
}

static int
read_categorical (reader *r, bl_model *m, const json_t *root)
{
  const json_t *a = get_arr (r, root, "categorical", 0);
  size_t i;
  json_t *c;
  if (!a)
    return r->status;
  m->ncat = json_array_size (a);
  m->cat = bl_calloc (m->ncat ? m->ncat : 1, sizeof *m->cat);
  m->dl = bl_calloc (m->ncat ? m->ncat : 1, sizeof *m->dl);
  m->catnames = bl_calloc (m->ncat ? m->ncat : 1, sizeof *m->catnames);
  if (!m->cat || !m->dl || !m->catnames) {
    m->ncat = 0;
    return nomem (r), r->status;
  }
  json_array_foreach (a, i, c) {
    bl_model_cat *mc = &m->cat[i];
    const json_t *lv;
    size_t k;
    json_t *v;
    char at[64];
    if (!json_is_object (c))
      return bad (r, elem (at, sizeof at, "categorical", i), "expected an object"), r->status;
    enter (r, "categorical", i);
    if (get_str (r, c, "column", 0, &mc->column) != BL_OK
        || get_str (r, c, "reference", 0, &mc->reference) != BL_OK
        || !(lv = get_arr (r, c, "levels", 0)))
      return r->status;
    mc->levels = bl_calloc (json_array_size (lv) + 1, sizeof *mc->levels);
    if (!mc->levels)
      return nomem (r), r->status;
    json_array_foreach (lv, k, v) {
      if (!json_is_string (v))
        return bad (r, elem (at, sizeof at, "levels", k), "expected a string"), r->status;
      if (!(mc->levels[mc->nlevels++] = bl_strdup (json_string_value (v))))
        return nomem (r), r->status;
    }
    leave (r);
    m->dl[i].column = mc->column;
    m->dl[i].levels = (const char *const *) mc->levels;
    m->dl[i].nlevels = mc->nlevels;
    m->dl[i].reference = mc->reference;
    m->catnames[i] = mc->column;
  }
  return BL_OK;
}

/* The names of a model file's variance kinds and transforms, in bl_variance and
   bl_transform order: the one table each is read with and listed from in messages. */
static const char *const variance_kinds[] = { "none", "column", "fitted" };
static const char *const transform_kinds[] = { "none", "log", "sqrt", "boxcox" };
#define NWORDS(w) (sizeof (w) / sizeof (w)[0])

/* "A, B or C" from the N WORDS into BUF (LEN bytes). */
static const char *
word_list (char *buf, size_t len, const char *const *words, size_t n)
{
  size_t used = 0;
  buf[0] = '\0';
  for (size_t i = 0; i < n && used < len; i++)
    used += (size_t) snprintf (buf + used, len - used, "%s%s",
                               i == 0 ? "" : i + 1 == n ? " or " : ", ", words[i]);
  return buf;
}

/* The index of the string S among the N WORDS, or -1 with KEY refused ("expected A, B or
   C, got 'S'"). */
static int
read_word (reader *r, const char *key, const char *s, const char *const *words, size_t n)
{
  char list[160], msg[400];
  for (size_t i = 0; i < n; i++)
    if (!strcmp (s, words[i]))
      return (int) i;
  snprintf (msg, sizeof msg, "expected %s, got '%.100s'", word_list (list, sizeof list, words,
                                                                     n), s);
  bad (r, key, msg);
  return -1;
}

/* method (from bl_method_name), family and link (from their tables). */
static int
read_method (reader *r, bl_model *m, const json_t *root)
{
  const char *methods[BL_METHOD_WLS + 1];
  char *s = NULL, list[400], msg[600];
  int k;
  for (k = 0; k <= (int) BL_METHOD_WLS; k++)
    methods[k] = bl_method_name ((bl_method) k);
  if (get_str (r, root, "method", 0, &s) != BL_OK)
    return r->status;
  k = read_word (r, "method", s, methods, NWORDS (methods));
  m->method = (bl_method) (k < 0 ? 0 : k);
  bl_free (s);
  if (r->status != BL_OK || get_str (r, root, "family", 0, &s) != BL_OK)
    return r->status;
  if (!(m->fam = bl_family_find (s))) {
    bl_family_names (list, sizeof list, ", ");
    snprintf (msg, sizeof msg, "unknown family '%.100s' (expected %s)", s, list);
    bad (r, "family", msg);
  }
  bl_free (s);
  if (r->status != BL_OK || get_str (r, root, "link", 0, &s) != BL_OK)
    return r->status;
  if (!(m->link = bl_link_find (s))) {
    bl_link_names (list, sizeof list, ", ");
    snprintf (msg, sizeof msg, "unknown link '%.100s' (expected %s)", s, list);
    bad (r, "link", msg);
  }
  bl_free (s);
  return r->status;
}

/* variance: kind, column (a string for kind column, else null), power (a number unless
   kind none, then null). */
static int
read_variance (reader *r, bl_model *m, const json_t *v)
{
  char *s = NULL;
  int k;
  if (get_str (r, v, "kind", 0, &s) != BL_OK)
    return r->status;
  k = read_word (r, "kind", s, variance_kinds, NWORDS (variance_kinds));
  m->var_kind = (bl_variance) (k < 0 ? 0 : k);
  bl_free (s);
  if (r->status != BL_OK || get_str (r, v, "column", 1, &m->var_col) != BL_OK
      || get_num (r, v, "power", 1, &m->power) != BL_OK)
    return r->status;
  if (m->var_kind == BL_VARIANCE_COLUMN && (!m->var_col || !m->var_col[0]))
    return bad (r, "column", "a column variance function needs its column's name"), r->status;
  if (m->var_kind != BL_VARIANCE_COLUMN && m->var_col)
    return bad (r, "column", "expected null: only kind column has a column"), r->status;
  if (m->var_kind == BL_VARIANCE_NONE && !isnan (m->power))
    return bad (r, "power", "expected null: kind none has no power"), r->status;
  if (m->var_kind != BL_VARIANCE_NONE && isnan (m->power))
    return bad (r, "power", "expected a number: the variance function's power K"), r->status;
  return BL_OK;
}

/* transform: kind, lambda (a number for boxcox, else null), shift (a number; 0 for
   none). */
static int
read_transform (reader *r, bl_model *m, const json_t *v)
{
  char *s = NULL;
  int k;
  if (get_str (r, v, "kind", 0, &s) != BL_OK)
    return r->status;
  k = read_word (r, "kind", s, transform_kinds, NWORDS (transform_kinds));
  m->tr = (bl_transform) (k < 0 ? 0 : k);
  bl_free (s);
  if (r->status != BL_OK
      || get_num (r, v, "lambda", m->tr != BL_TRANSFORM_BOXCOX, &m->lambda) != BL_OK
      || get_num (r, v, "shift", 0, &m->shift) != BL_OK)
    return r->status;
  if (m->tr != BL_TRANSFORM_BOXCOX && !isnan (m->lambda))
    return bad (r, "lambda", "expected null: only kind boxcox has a lambda"), r->status;
  if (m->tr == BL_TRANSFORM_NONE && m->shift != 0.0)
    return bad (r, "shift", "expected 0: kind none shifts nothing"), r->status;
  return BL_OK;
}

static int
read_kinds (reader *r, bl_model *m, const json_t *root)
{
  const json_t *v;
  if (read_method (r, m, root) != BL_OK)
    return r->status;
  if (!(v = member (r, root, "variance")) || !json_is_object (v))
    return v ? (bad (r, "variance", "expected an object"), r->status) : r->status;
  enter (r, "variance", (size_t) -1);
  if (read_variance (r, m, v) != BL_OK)
    return r->status;
  leave (r);
  if (m->var_kind != BL_VARIANCE_NONE && m->method != BL_METHOD_WLS)
    return bad (r, "variance", "a variance function needs method wls"), r->status;

  if (!(v = member (r, root, "transform")) || !json_is_object (v))
    return v ? (bad (r, "transform", "expected an object"), r->status) : r->status;
  enter (r, "transform", (size_t) -1);
  if (read_transform (r, m, v) != BL_OK)
    return r->status;
  leave (r);
  if (m->tr != BL_TRANSFORM_NONE
      && (m->method != BL_METHOD_OLS || !bl_family_has (m->fam, BL_FAM_NORMAL)
          || m->link != &bl_link_identity))
    return bad (r, "transform", "a transformed response needs method ols"), r->status;
  if ((m->method != BL_METHOD_GLM)
      && (!bl_family_has (m->fam, BL_FAM_NORMAL) || m->link != &bl_link_identity))
    return bad (r, "method", "least squares needs the gaussian family and identity link"),
           r->status;
  return BL_OK;
}

/* smearing: null without a transform; with one, an object of n, stride, the four means and
   the kept residuals (their count ceil(n / stride)). */
static int
read_smearing (reader *r, bl_model *m, const json_t *root)
{
  const json_t *s = member (r, root, "smearing"), *a;
  size_t stride, i;
  json_t *v;
  char at[64];
  if (!s)
    return r->status;
  if (m->tr == BL_TRANSFORM_NONE)
    return json_is_null (s) ? BL_OK
           : (bad (r, "smearing", "expected null: a model without a transform has no "
                   "smearing data"), r->status);
  if (!json_is_object (s))
    return bad (r, "smearing", "expected an object"), r->status;
  enter (r, "smearing", (size_t) -1);
  if (get_size (r, s, "n", &m->smear_n) != BL_OK || get_size (r, s, "stride", &stride) != BL_OK
      || get_num (r, s, "mean_exp", 0, &m->smear_mean_exp) != BL_OK
      || get_num (r, s, "mean", 0, &m->smear_mean) != BL_OK
      || get_num (r, s, "mean_sq", 0, &m->smear_mean_sq) != BL_OK
      || get_num (r, s, "min", 0, &m->smear_min) != BL_OK
      || !(a = get_arr (r, s, "residuals", 0)))
    return r->status;
  m->nres = json_array_size (a);
  m->smear_stride = stride;
  if (m->nres == 0 || stride == 0 || m->nres != (m->smear_n + stride - 1) / stride)
    return bad (r, "residuals", "the count does not match n and stride"), r->status;
  if (!(m->res = bl_mallocn (m->nres, sizeof *m->res)))
    return nomem (r), r->status;
  json_array_foreach (a, i, v)
    if (num_of (r, v, elem (at, sizeof at, "residuals", i), 0, &m->res[i]) != BL_OK)
      return r->status;
  leave (r);
  return BL_OK;
}

static int
read_coef (reader *r, bl_model *m, const json_t *root)
{
  const json_t *cols = get_arr (r, root, "columns", 0), *coef, *cov;
  size_t j, k;
  json_t *v, *row;
  char at[96];
  if (!cols)
    return r->status;
  m->p = json_array_size (cols);
  if (m->p == 0)
    return bad (r, "columns", "the model has no columns"), r->status;
  if (m->p > BL_MODEL_MAX_COLUMNS) {    /* before the p x p covariance is allocated */
    char what[96];
    snprintf (what, sizeof what, "%zu columns, more than the limit of %d", m->p,
              BL_MODEL_MAX_COLUMNS);
    return bad (r, "columns", what), r->status;
  }
  m->labels = bl_calloc (m->p, sizeof *m->labels);
  m->beta = bl_mallocn (m->p, sizeof *m->beta);
  m->cov = bl_mallocn (m->p * m->p, sizeof *m->cov);
  if (!m->labels || !m->beta || !m->cov || m->p > SIZE_MAX / m->p)
    return nomem (r), r->status;
  json_array_foreach (cols, j, v) {
    if (!json_is_string (v))
      return bad (r, elem (at, sizeof at, "columns", j), "expected a string"), r->status;
    if (!(m->labels[j] = bl_strdup (json_string_value (v))))
      return nomem (r), r->status;
  }
  if (!(coef = get_arr (r, root, "coef", m->p)) || !(cov = get_arr (r, root, "cov", m->p)))
    return r->status;
  json_array_foreach (coef, j, v)
    if (num_of (r, v, elem (at, sizeof at, "coef", j), 1, &m->beta[j]) != BL_OK)
      return r->status;
  json_array_foreach (cov, j, row) {
    if (!json_is_array (row) || json_array_size (row) != m->p) {
      snprintf (at, sizeof at, "cov[%zu]", j);
      return bad (r, at, "expected an array as long as 'columns'"), r->status;
    }
    json_array_foreach (row, k, v) {
      double *const c = &m->cov[j + k * m->p];
      snprintf (at, sizeof at, "cov[%zu][%zu]", j, k);
      if (num_of (r, v, at, 1, c) != BL_OK)
        return r->status;
      if ((isnan (m->beta[j]) || isnan (m->beta[k])) && !isnan (*c))
        return bad (r, at, "expected null: the covariance of an aliased (null) coefficient"),
               r->status;
      if (!isnan (m->beta[j]) && !isnan (m->beta[k]) && isnan (*c))
        return bad (r, at, "null covariance of an estimated coefficient"), r->status;
    }
  }
  return BL_OK;
}

/* The parsed document of PATH, or NULL with ERR: BL_EIO (unopenable or unreadable), BL_EDATA
   (larger than the limit, or not JSON: where = "FILE:LINE:COLUMN"). */
static json_t *
load_root (const char *path, bl_err *err)
{
  json_error_t je;
  json_t *root = NULL;
  FILE *f = fopen (path, "rb");
  struct stat st;
  if (!f) {
    bl_fail (err, BL_EIO, path, "cannot open: %s", strerror (errno));
    return NULL;
  }
  /* the whole document is parsed into memory: a regular file larger than the limit is
     refused first (a stream is not sized here; its parse fails cleanly when memory does) */
  if (fstat (fileno (f), &st) == 0 && S_ISREG (st.st_mode) && st.st_size > BL_MODEL_MAX_BYTES) {
    bl_fail (err, BL_EDATA, path, "the model file is larger than %ld MiB (the limit)",
             BL_MODEL_MAX_BYTES >> 20);
    goto done;
  }
  root = json_loadf (f, JSON_REJECT_DUPLICATES, &je);
  if (!root && ferror (f)) {
    bl_fail (err, BL_EIO, path, "read failed: %s", strerror (errno));
  } else if (!root) {
    char where[1100];
    snprintf (where, sizeof where, "%s:%d:%d", path, je.line, je.column);
    bl_fail (err, BL_EDATA, where, "not a model file: invalid JSON (%s)", je.text);
  }
done:
  fclose (f);
  return root;
}

/* ROOT is a ballast model of a format this code reads: its version into *VERSION.  BL_OK,
   or BL_EDATA with where = PATH. */
static int
check_format (const json_t *root, const char *path, int *version, bl_err *err)
{
  const json_t *v;
  if (!json_is_object (root) || !(v = json_object_get (root, "format")) || !json_is_string (v)
      || strcmp (json_string_value (v), BL_MODEL_FORMAT_NAME) != 0)
    return bl_fail (err, BL_EDATA, path, "not a ballast model file (no \"format\": \"%s\")",
                    BL_MODEL_FORMAT_NAME);
  v = json_object_get (root, "format_version");
  if (!v || !json_is_integer (v) || json_integer_value (v) < 1)
    return bl_fail (err, BL_EDATA, path, "'format_version': expected a positive integer");
  if (json_integer_value (v) > BL_MODEL_FORMAT)
    return bl_fail (err, BL_EDATA, path, "'format_version': %lld is newer than this ballast "
                    "reads (%d); use a newer ballast", (long long) json_integer_value (v),
                    BL_MODEL_FORMAT);
  *version = (int) json_integer_value (v);
  return BL_OK;
}

/* Every key after the format, in the order of the file, then the checks across keys. */
static int
read_fields (reader *r, bl_model *m, const json_t *root)
{
  if (get_str (r, root, "response", 0, &m->response) != BL_OK
      || get_bool (r, root, "intercept", &m->intercept) != BL_OK
      || read_terms (r, m, root) != BL_OK
      || get_str (r, root, "weights", 1, &m->weights) != BL_OK
      || read_categorical (r, m, root) != BL_OK
      || read_kinds (r, m, root) != BL_OK
      || read_smearing (r, m, root) != BL_OK
      || read_coef (r, m, root) != BL_OK
      || get_str (r, root, "se_kind", 0, &m->se_kind) != BL_OK
      || get_num (r, root, "dispersion", 1, &m->phi_used) != BL_OK
      || get_num (r, root, "phi_pearson", 1, &m->phi_pearson) != BL_OK
      || get_num (r, root, "phi_ml", 1, &m->phi_ml) != BL_OK
      || get_num (r, root, "family_par", 1, &m->fam_par) != BL_OK
      || get_size (r, root, "n", &m->n) != BL_OK
      || get_size (r, root, "rank", &m->rank) != BL_OK
      || get_size (r, root, "dof_resid", &m->dof_resid) != BL_OK
      || get_bool (r, root, "wald_is_t", &m->wald_is_t) != BL_OK
      || get_num (r, root, "level", 0, &m->level) != BL_OK)
    return r->status;
  /* the coefficients' reference dof (G - 1 with cluster standard errors); files written
     before it was saved use dof_resid */
  m->dof_wald = m->dof_resid;
  if (json_object_get (root, "dof_wald")
      && get_size (r, root, "dof_wald", &m->dof_wald) != BL_OK)
    return r->status;
  return bl_model_check (m, r->err);
}

bl_model *
bl_model_read (const char *path, bl_err *err)
{
  reader r = { path, err, BL_OK, "" };
  json_t *root = load_root (path, err);
  bl_model *m = NULL;
  int version = 0, status;
  if (!root)
    return NULL;
  if ((status = check_format (root, path, &version, err)) != BL_OK)
    goto done;
  if (!(m = bl_calloc (1, sizeof *m)) || !(m->path = bl_strdup (path))) {
    nomem (&r);
    status = r.status;
    goto done;
  }
  m->version = version;
  status = read_fields (&r, m, root);
done:
  json_decref (root);
  if (status != BL_OK) {
    bl_model_free (m);
    m = NULL;
  }
  return m;
}

void
bl_model_table_opts (const bl_model *m, bl_table_opts *opt)
{
  opt->categorical = m->catnames;
  opt->n_categorical = m->ncat;
}

/* ---------------------------------------------------------------- accessors */

size_t bl_model_p (const bl_model *m) { return m->p; }
const char *bl_model_label (const bl_model *m, size_t j) { return j < m->p ? m->labels[j] : NULL; }
const double *bl_model_beta (const bl_model *m) { return m->beta; }
const double *bl_model_cov (const bl_model *m) { return m->cov; }
const char *bl_model_response (const bl_model *m) { return m->response; }
double bl_model_level (const bl_model *m) { return m->level; }
