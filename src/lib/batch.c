/* batch.c -- run a spec's jobs into an output folder (see batch.h).

   Jobs run on opts.jobs threads, each taking the next job index; every result is kept by
   index and the summary, the report and all file contents depend only on the spec and the
   data, never on the number of threads or the order in which jobs finish. */
#define _GNU_SOURCE 1            /* open_memstream, O_DIRECTORY, O_NOFOLLOW, mkdirat */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>
#include <gsl/gsl_rng.h>
#include "alloc.h"
#include "batch.h"
#include "diag.h"
#include "jsonw.h"
#include "report.h"
#include "ballast.h"


typedef struct job_out {
  char *section;              /* the job's HTML section */
  size_t section_len;
} job_out;

typedef struct run_ctx {
  const bl_spec *spec;
  const bl_batch_opts *opt;
  int outfd;
  bl_batch_row *rows;
  job_out *outs;
  pthread_mutex_t lock;
  size_t next, done;
  int fatal;                  /* BL_ENOMEM or BL_ECANCEL seen */
  bl_err fatal_err;
  struct timespec t0;
} run_ctx;

void
bl_batch_opts_init (bl_batch_opts *opt)
{
  opt->jobs = 1;
  opt->cancel = NULL;
  opt->progress = NULL;
  opt->progress_ctx = NULL;
}

unsigned long
bl_batch_seed (const char *job, unsigned long base)
{
  /* FNV-1a (Fowler, Noll & Vo; the 64-bit offset basis and prime), then mixed with the base
     seed by one more multiply, so that every job has its own stream */
  unsigned long long h = 1469598103934665603ULL;
  for (const unsigned char *s = (const unsigned char *) job; *s; s++)
    h = (h ^ *s) * 1099511628211ULL;
  h = (h ^ (unsigned long long) base) * 1099511628211ULL;
  return (unsigned long) (h ^ (h >> 29)) & 0xffffffffUL;
}

/* Write LEN bytes of BUF to DIRFD/NAME atomically: a temporary name in the same folder
   (O_EXCL | O_NOFOLLOW: never through a planted link), write, fsync, rename over NAME. */
static int
write_atomic (int dirfd, const char *name, const char *buf, size_t len, const char *where,
              bl_err *err)
{
  char tmp[256];
  static const char tag[] = "tmp";
  int fd = -1;
  for (unsigned k = 0; k < 100 && fd < 0; k++) {
    snprintf (tmp, sizeof tmp, ".%s.%s-%ld-%u-%lx", name, tag, (long) getpid (), k,
              (unsigned long) (size_t) buf);
    fd = openat (dirfd, tmp, O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0644);
    if (fd < 0 && errno != EEXIST)
      break;
  }
  if (fd < 0)
    return bl_fail (err, BL_EIO, where, "cannot create a temporary file for '%s': %s", name,
                    strerror (errno));
  for (size_t off = 0; off < len;) {
    const ssize_t w = write (fd, buf + off, len - off);
    if (w < 0) {
      if (errno == EINTR)
        continue;
      close (fd);
      unlinkat (dirfd, tmp, 0);
      return bl_fail (err, BL_EIO, where, "cannot write '%s': %s", name, strerror (errno));
    }
    off += (size_t) w;
  }
  if (fsync (fd) != 0 || close (fd) != 0) {
    unlinkat (dirfd, tmp, 0);
    return bl_fail (err, BL_EIO, where, "cannot write '%s': %s", name, strerror (errno));
  }
  if (renameat (dirfd, tmp, dirfd, name) != 0) {
    unlinkat (dirfd, tmp, 0);
    return bl_fail (err, BL_EIO, where, "cannot move '%s' into place: %s", name,
                    strerror (errno));
  }
  return BL_OK;
}

/* A memory stream, for rendering a file before it is written. */
typedef struct membuf { char *buf; size_t len; FILE *f; } membuf;

static int
mem_open (membuf *m)
{
  m->buf = NULL;
  m->len = 0;
  m->f = open_memstream (&m->buf, &m->len);
  return m->f ? 0 : -1;
}

static int
mem_close (membuf *m)
{
  const int r = fclose (m->f);
  m->f = NULL;
  return r;
}

static void
mem_free (membuf *m)
{
  if (m->f)
    fclose (m->f);
  free (m->buf);            /* open_memstream's buffer: the C library's allocator */
  m->buf = NULL;
}

/* Open (creating) the folder NAME inside DIRFD without following a link. */
static int
open_subdir (int dirfd, const char *name)
{
  if (mkdirat (dirfd, name, 0755) != 0 && errno != EEXIST)
    return -1;
  return openat (dirfd, name, O_RDONLY | O_DIRECTORY | O_NOFOLLOW | O_CLOEXEC);
}

static void
row_fail (bl_batch_row *row, const bl_err *e)
{
  row->ok = 0;
  if (e->where[0])
    snprintf (row->message, sizeof row->message, "%s: %s", e->where, e->msg);
  else
    snprintf (row->message, sizeof row->message, "%s", e->msg);
}

/* Run job I: fit or compare, write its files, render its section. */
static void
run_job (run_ctx *rc, size_t i)
{
  const bl_spec_job *sj = bl_spec_get (rc->spec, i);
  const bl_job *j = &sj->job;
  bl_batch_row *row = &rc->rows[i];
  bl_terms *terms = NULL, *offset = NULL;
  bl_table *table = NULL;
  bl_design *design = NULL;
  bl_compare *cmp = NULL;
  bl_fit *fit = NULL;
  const bl_fit *resfit = NULL;
  membuf mb = { NULL, 0, NULL };
  bl_err e;
  int jobfd = -1;
  const unsigned long seed = bl_batch_seed (sj->name, j->seed);
  char where[BL_SPEC_NAME_MAX + 16];
  bl_report_info info;

  memset (row, 0, sizeof *row);
  snprintf (row->job, sizeof row->job, "%s", sj->name);
  snprintf (row->method, sizeof row->method, "%s",
            sj->single ? bl_method_name (j->fit.method) : "compare");
  row->aic = row->delta = row->spread_ratio = NAN;
  row->ok = 1;
  snprintf (where, sizeof where, "job '%s'", sj->name);
  bl_err_clear (&e);

  jobfd = open_subdir (rc->outfd, sj->name);
  if (jobfd < 0) {
    bl_fail (&e, BL_EIO, where, "cannot use the folder '%s' in the output folder: %s",
             sj->name, errno == ELOOP || errno == ENOTDIR ? "it is a symbolic link or not a "
             "folder" : strerror (errno));
    row_fail (row, &e);
    goto section;
  }
  if (bl_job_parse_terms (j, NULL, &terms, &offset, &e) != BL_OK
      || bl_job_load (j, terms, offset, &table, &design, &e) != BL_OK) {
    row_fail (row, &e);
    goto result;
  }
  row->n = bl_design_n (design);
  if (sj->single) {
    bl_fit_opts fo = j->fit;
    fo.irls.cancel = rc->opt->cancel;
    fit = bl_fit_glm (design, &fo, &e);
    if (!fit) {
      row_fail (row, &e);
      goto result;
    }
    if (!bl_fit_stats_get (fit)->converged) {
      row_fail (row, bl_fit_status (fit));
    } else {
      const bl_fit_stats *st = bl_fit_stats_get (fit);
      gsl_rng *rng = gsl_rng_alloc (gsl_rng_mt19937);
      double *r = bl_mallocn (st->n ? st->n : 1, sizeof *r);
      bl_spread sp;
      snprintf (row->winner, sizeof row->winner, "%s/%s", bl_fit_family (fit)->name,
                bl_fit_link (fit)->name);
      row->aic = st->aic;
      if (rng && r) {
        gsl_rng_set (rng, seed);
        bl_pearson_residuals (fit, r);
        if (bl_spread_compute (bl_fit_mu (fit), r, st->n, rng, BL_DIAG_NULL_REPS, &sp, &e)
            == BL_OK) {
          row->spread_ratio = sp.ratio;
          bl_spread_clear (&sp);
        }
      }
      bl_free (r);
      if (rng)
        gsl_rng_free (rng);
      resfit = fit;
    }
  } else {
    bl_compare_opts co;
    long w;
    bl_compare_opts_init (&co);
    co.candidates = j->candidates;
    co.folds = j->folds;
    co.seed = seed;
    co.fit = j->fit;
    co.fit.irls.cancel = rc->opt->cancel;
    cmp = bl_compare_run (design, &co, &e);
    if (!cmp) {
      row_fail (row, &e);
      goto result;
    }
    w = bl_compare_winner (cmp);
    if (w < 0) {
      bl_fail (&e, BL_ENOCONV, where, "no candidate could be fitted");
      row_fail (row, &e);
    } else {
      const bl_candidate *k = bl_compare_get (cmp, (size_t) w);
      double second = HUGE_VAL;
      snprintf (row->winner, sizeof row->winner, "%s", k->id);
      row->aic = bl_compare_integer_y (cmp) ? k->aic_discrete : k->aic;
      row->spread_ratio = k->spread_ratio;
      for (size_t q = 0; q < bl_compare_count (cmp); q++) {
        const bl_candidate *o = bl_compare_get (cmp, q);
        if ((long) q != w && isfinite (o->delta_aic) && o->delta_aic < second)
          second = o->delta_aic;
      }
      row->delta = isfinite (second) ? second : NAN;
      resfit = k->fit;
    }
  }

result:
  /* result.json: the compare or fit document, or the failure */
  if (jobfd >= 0 && mem_open (&mb) == 0) {
    int st = BL_OK;
    info.source = j->data;
    info.terms = terms;
    info.offset = offset;
    info.weights = j->weights;
    info.tool_version = bl_version ();
    info.against = NULL;
    info.by = NULL;
    if (cmp)
      st = bl_report_compare_json (mb.f, cmp, design, &info, &e);
    else if (fit)
      st = bl_report_fit_json (mb.f, fit, &info, &e);
    else {
      bl_jsonw w;
      jw_init (&w, mb.f);
      jw_obj (&w, NULL);
      jw_str (&w, "job", sj->name);
      jw_str (&w, "status", "failed");
      jw_str (&w, "error", row->message);
      jw_obj_end (&w);
      jw_finish (&w);
    }
    if (mem_close (&mb) == 0 && st == BL_OK) {
      if (write_atomic (jobfd, "result.json", mb.buf, mb.len, where, &e) != BL_OK)
        row_fail (row, &e);
    } else {
      bl_fail (&e, BL_ENOMEM, where, "could not render result.json");
      row_fail (row, &e);
    }
    mem_free (&mb);
  }
  /* residuals.csv of the winner or the single model */
  if (jobfd >= 0 && resfit && mem_open (&mb) == 0) {
    gsl_rng *rng = gsl_rng_alloc (gsl_rng_mt19937);
    bl_resid_table *t = NULL;
    if (rng) {
      gsl_rng_set (rng, seed);
      t = bl_resid_table_new (resfit, rng, &e);
      gsl_rng_free (rng);
    }
    if (t && bl_report_residuals_csv (mb.f, resfit, t, &e) == BL_OK && mem_close (&mb) == 0) {
      if (write_atomic (jobfd, "residuals.csv", mb.buf, mb.len, where, &e) != BL_OK)
        row_fail (row, &e);
    } else {
      row_fail (row, &e);
    }
    bl_resid_table_free (t);
    mem_free (&mb);
  }
section:
  if (mem_open (&mb) == 0) {
    if (bl_report_job_html (mb.f, row, cmp, cmp ? NULL : (row->ok ? fit : NULL), design, seed,
                            &e) == BL_OK && mem_close (&mb) == 0) {
      rc->outs[i].section = mb.buf;
      rc->outs[i].section_len = mb.len;
      mb.buf = NULL;
    }
    mem_free (&mb);
  }
  if (jobfd >= 0)
    close (jobfd);
  bl_compare_free (cmp);
  bl_fit_free (fit);
  bl_design_free (design);
  bl_table_free (table);
  bl_terms_free (terms);
  bl_terms_free (offset);
}

static void *
worker (void *arg)
{
  run_ctx *rc = arg;
  for (;;) {
    size_t i, done;
    struct timespec t;
    pthread_mutex_lock (&rc->lock);
    if (rc->next >= bl_spec_njobs (rc->spec) || (rc->opt->cancel && *rc->opt->cancel)) {
      pthread_mutex_unlock (&rc->lock);
      return NULL;
    }
    i = rc->next++;
    pthread_mutex_unlock (&rc->lock);
    run_job (rc, i);
    pthread_mutex_lock (&rc->lock);
    done = ++rc->done;
    clock_gettime (CLOCK_MONOTONIC, &t);
    if (rc->opt->progress)
      rc->opt->progress (rc->opt->progress_ctx, done, bl_spec_njobs (rc->spec),
                         bl_spec_get (rc->spec, i)->name,
                         (double) (t.tv_sec - rc->t0.tv_sec)
                         + 1e-9 * (double) (t.tv_nsec - rc->t0.tv_nsec));
    pthread_mutex_unlock (&rc->lock);
  }
}

/* CSV field: quoted when it holds a delimiter, a quote or a line break (RFC 4180). */
static void
csv_field (FILE *f, const char *s)
{
  if (strpbrk (s, ",\"\r\n")) {
    fputc ('"', f);
    for (; *s; s++) {
      if (*s == '"')
        fputc ('"', f);
      fputc (*s, f);
    }
    fputc ('"', f);
  } else {
    fputs (s, f);
  }
}

static void
csv_num (FILE *f, double v)
{
  if (isfinite (v))
    fprintf (f, ",%.17g", v == 0.0 ? 0.0 : v);
  else
    fputc (',', f);
}

static int
write_summaries (run_ctx *rc, bl_err *err)
{
  const size_t nj = bl_spec_njobs (rc->spec);
  membuf mb;
  bl_jsonw w;
  size_t failed = 0;
  int st;
  const char **sections;
  /* summary.json */
  if (mem_open (&mb) != 0)
    return bl_fail (err, BL_ENOMEM, "run", "out of memory");
  bl_report_head_json (&w, mb.f, bl_version (), NULL, NULL);
  jw_str (&w, "spec", bl_spec_stem (rc->spec));
  jw_arr (&w, "jobs");
  for (size_t i = 0; i < nj; i++) {
    const bl_batch_row *r = &rc->rows[i];
    failed += !r->ok;
    jw_obj (&w, NULL);
    jw_str (&w, "job", r->job);
    jw_str (&w, "status", r->ok ? "done" : "failed");
    jw_str (&w, "method", r->method);
    jw_str (&w, "winner", r->winner[0] ? r->winner : NULL);
    jw_num (&w, "aic", r->aic);
    jw_num (&w, "delta", r->delta);
    jw_num (&w, "spread_ratio", r->spread_ratio);
    jw_size (&w, "n", r->n);
    jw_str (&w, "message", r->message);
    jw_obj_end (&w);
  }
  jw_arr_end (&w);
  jw_size (&w, "failed", failed);
  jw_obj_end (&w);
  jw_finish (&w);
  if (mem_close (&mb) != 0) {
    mem_free (&mb);
    return bl_fail (err, BL_ENOMEM, "run", "out of memory");
  }
  st = write_atomic (rc->outfd, "summary.json", mb.buf, mb.len, "run", err);
  mem_free (&mb);
  if (st != BL_OK)
    return st;
  /* summary.csv */
  if (mem_open (&mb) != 0)
    return bl_fail (err, BL_ENOMEM, "run", "out of memory");
  fputs ("job,status,method,winner,aic,delta,spread_ratio,n,message\n", mb.f);
  for (size_t i = 0; i < nj; i++) {
    const bl_batch_row *r = &rc->rows[i];
    csv_field (mb.f, r->job);
    fprintf (mb.f, ",%s,", r->ok ? "done" : "failed");
    csv_field (mb.f, r->method);
    fputc (',', mb.f);
    csv_field (mb.f, r->winner);
    csv_num (mb.f, r->aic);
    csv_num (mb.f, r->delta);
    csv_num (mb.f, r->spread_ratio);
    fprintf (mb.f, ",%zu,", r->n);
    csv_field (mb.f, r->message);
    fputc ('\n', mb.f);
  }
  if (mem_close (&mb) != 0) {
    mem_free (&mb);
    return bl_fail (err, BL_ENOMEM, "run", "out of memory");
  }
  st = write_atomic (rc->outfd, "summary.csv", mb.buf, mb.len, "run", err);
  mem_free (&mb);
  if (st != BL_OK)
    return st;
  /* index.html */
  sections = bl_calloc (nj ? nj : 1, sizeof *sections);
  if (!sections || mem_open (&mb) != 0) {
    bl_free (sections);
    return bl_fail (err, BL_ENOMEM, "run", "out of memory");
  }
  for (size_t i = 0; i < nj; i++)
    sections[i] = rc->outs[i].section ? rc->outs[i].section : "";
  st = bl_report_html_page (mb.f, bl_spec_stem (rc->spec), rc->rows, sections, nj, err);
  bl_free (sections);
  if (mem_close (&mb) != 0 || st != BL_OK) {
    mem_free (&mb);
    return st != BL_OK ? st : bl_fail (err, BL_ENOMEM, "run", "out of memory");
  }
  st = write_atomic (rc->outfd, "index.html", mb.buf, mb.len, "run", err);
  mem_free (&mb);
  return st;
}

int
bl_batch_run (const bl_spec *spec, const char *outdir, const bl_batch_opts *opt,
              bl_batch_row *rows, bl_err *err)
{
  run_ctx rc;
  const size_t nj = bl_spec_njobs (spec);
  unsigned nt = opt->jobs ? opt->jobs : 1;
  pthread_t th[16];
  unsigned started = 0;
  int st = BL_OK;
  struct stat sb;

  memset (&rc, 0, sizeof rc);
  rc.spec = spec;
  rc.opt = opt;
  if (mkdir (outdir, 0755) != 0 && errno != EEXIST)
    return bl_fail (err, BL_EIO, outdir, "cannot create the output folder: %s",
                    strerror (errno));
  if (lstat (outdir, &sb) == 0 && S_ISLNK (sb.st_mode))
    return bl_fail (err, BL_EIO, outdir, "the output folder is a symbolic link; give a real "
                    "folder");
  rc.outfd = open (outdir, O_RDONLY | O_DIRECTORY | O_NOFOLLOW | O_CLOEXEC);
  if (rc.outfd < 0)
    return bl_fail (err, BL_EIO, outdir, "cannot open the output folder: %s",
                    strerror (errno));
  rc.rows = rows;
  rc.outs = bl_calloc (nj ? nj : 1, sizeof *rc.outs);
  if (!rc.outs) {
    close (rc.outfd);
    return bl_fail (err, BL_ENOMEM, "run", "out of memory");
  }
  pthread_mutex_init (&rc.lock, NULL);
  clock_gettime (CLOCK_MONOTONIC, &rc.t0);
  if (nt > 16)
    nt = 16;
  if (nt > nj)
    nt = nj ? (unsigned) nj : 1;
  for (unsigned t = 1; t < nt; t++)
    if (pthread_create (&th[t], NULL, worker, &rc) == 0)
      started = t;
    else
      break;
  worker (&rc);
  for (unsigned t = 1; t <= started; t++)
    pthread_join (th[t], NULL);
  pthread_mutex_destroy (&rc.lock);
  if (opt->cancel && *opt->cancel)
    st = bl_fail (err, BL_ECANCEL, "run", "the run was cancelled; finished files are "
                  "complete, the rest were not written");
  else
    st = write_summaries (&rc, err);
  for (size_t i = 0; i < nj; i++)
    free (rc.outs[i].section);
  bl_free (rc.outs);
  close (rc.outfd);
  return st;
}
