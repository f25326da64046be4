/* batch.c -- run a spec's jobs into an output folder (see batch.h).

   Jobs run on opts.jobs threads of the pool (thread.h), job I on worker I mod jobs; every
   result is kept by index and the summary, the report and all file contents depend only on the spec and the
   data, never on the number of threads or the order in which jobs finish. */
#define _GNU_SOURCE 1            /* open_memstream, O_DIRECTORY, O_NOFOLLOW, mkdirat */
#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <pthread.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>
#include "alloc.h"
#include "job.h"
#include "diag.h"
#include "io_path.h"
#include "report_impl.h"
#include "report.h"
#include "thread.h"
#include "version.h"


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
  size_t done;
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
  opt->spec_path = NULL;
  opt->outdir_label = NULL;
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

/* Whether the caller's cancel flag is set. */
static int
cancelled (const run_ctx *rc)
{
  return rc->opt->cancel && *rc->opt->cancel;
}

/* The files a run writes; write_atomic names its temporaries ".NAME.tmp-PID-K-HEX". */
static const char *const owned[] = { "result.json", "residuals.csv", "summary.json",
                                     "summary.csv", "index.html" };

/* Whether the folder entry ENT is a temporary of write_atomic whose writer is gone: a process
   that no longer exists (killed outright, it could not remove it; kill (PID, 0) fails with
   ESRCH), or this one (the run has not started writing yet).  A live run's are left alone. */
static int
stale_tmp (const char *ent)
{
  for (size_t i = 0; i < sizeof owned / sizeof owned[0]; i++) {
    const size_t L = strlen (owned[i]);
    const char *s = ent + 1 + L + 5;
    char *e;
    long pid;
    if (ent[0] != '.' || strncmp (ent + 1, owned[i], L) != 0
        || strncmp (ent + 1 + L, ".tmp-", 5) != 0)
      continue;
    pid = strtol (s, &e, 10);
    if (e == s || *e != '-' || pid <= 0)
      return 0;
    s = e + 1;
    (void) strtoul (s, &e, 10);
    if (e == s || *e != '-')
      return 0;
    s = e + 1;
    (void) strtoul (s, &e, 16);
    if (e == s || *e != '\0')
      return 0;
    return (pid_t) pid == getpid () || (kill ((pid_t) pid, 0) != 0 && errno == ESRCH);
  }
  return 0;
}

/* Remove the stale temporaries (stale_tmp) in the folder DIRFD; best effort, nothing else is
   touched (unlinkat removes a link itself, never what it points to). */
static void
remove_stale (int dirfd)
{
  const int fd = openat (dirfd, ".", O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  DIR *dir = fd >= 0 ? fdopendir (fd) : NULL;
  struct dirent *de;
  if (!dir) {
    if (fd >= 0)
      close (fd);
    return;
  }
  while ((de = readdir (dir)))
    if (stale_tmp (de->d_name))
      unlinkat (dirfd, de->d_name, 0);
  closedir (dir);
}

/* Write LEN bytes of BUF to DIRFD/NAME atomically: a temporary name in the same folder
   (O_EXCL | O_NOFOLLOW: never through a planted link), write, fsync, rename over NAME.
   When that fails (a full disk, a folder made read-only), NAME is removed as well: a file an
   earlier run left under it must not stand for this run's (unlinkat removes a link itself,
   and a folder under the name stays). */
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
  if (fd < 0) {
    const int e = errno;
    unlinkat (dirfd, name, 0);
    return bl_fail (err, BL_EIO, where, "cannot create a temporary file for '%s': %s", name,
                    strerror (e));
  }
  for (size_t off = 0; off < len;) {
    const ssize_t w = write (fd, buf + off, len - off);
    if (w < 0) {
      const int e = errno;
      if (e == EINTR)
        continue;
      close (fd);
      unlinkat (dirfd, tmp, 0);
      unlinkat (dirfd, name, 0);
      return bl_fail (err, BL_EIO, where, "cannot write '%s': %s", name, strerror (e));
    }
    off += (size_t) w;
  }
  if (fsync (fd) != 0) {
    const int e = errno;
    close (fd);
    unlinkat (dirfd, tmp, 0);
    unlinkat (dirfd, name, 0);
    return bl_fail (err, BL_EIO, where, "cannot write '%s': %s", name, strerror (e));
  }
  if (close (fd) != 0) {
    const int e = errno;
    unlinkat (dirfd, tmp, 0);
    unlinkat (dirfd, name, 0);
    return bl_fail (err, BL_EIO, where, "cannot write '%s': %s", name, strerror (e));
  }
  if (renameat (dirfd, tmp, dirfd, name) != 0) {
    const int e = errno;
    unlinkat (dirfd, tmp, 0);
    unlinkat (dirfd, name, 0);
    return bl_fail (err, BL_EIO, where, "cannot move '%s' into place: %s", name,
                    strerror (e));
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

/* Out of memory in job NAME: the whole run stops (no job can be trusted to finish, and a
   job that failed for want of memory must not look like a data problem in the summary).
   The first such error is kept, with the job named; the workers take no more jobs, and
   bl_batch_run returns it without writing the summaries.  Returns BL_ENOMEM. */
static int
run_nomem (run_ctx *rc, const char *name, const bl_err *e)
{
  pthread_mutex_lock (&rc->lock);
  if (!rc->fatal) {
    char jw[BL_SPEC_NAME_MAX + 16];
    int own;
    snprintf (jw, sizeof jw, "job '%s'", name);
    own = !e->where[0] || strcmp (e->where, jw) == 0;   /* the place is the job itself */
    rc->fatal = BL_ENOMEM;
    bl_fail (&rc->fatal_err, BL_ENOMEM, jw, "%s%s%s; the run stopped: finished files are "
             "complete, the rest were not written", own ? "" : e->where, own ? "" : ": ",
             e->msg[0] ? e->msg : "out of memory");
  }
  pthread_mutex_unlock (&rc->lock);
  return BL_ENOMEM;
}

/* Close M, into which a writer rendered FILE with status ST: BL_OK; BL_ENOMEM when the
   memory stream could not grow (a write error on it, or on closing it, can only be that:
   E filled here) or when the writer ran out of memory itself (E filled by it); else the
   writer's own error, in E. */
static int
render_status (membuf *m, int st, const char *where, const char *file, bl_err *e)
{
  const int closed = mem_close (m);
  if (st == BL_OK && closed == 0)
    return BL_OK;
  if (st == BL_OK || st == BL_EIO)
    return bl_fail (e, BL_ENOMEM, where, "out of memory rendering '%s'", file);
  return st;
}

/* The summary line's start for job SJ: its name and method, no figures yet. */
static void
row_start (bl_batch_row *row, const bl_spec_job *sj)
{
  memset (row, 0, sizeof *row);
  snprintf (row->job, sizeof row->job, "%s", sj->name);
  snprintf (row->method, sizeof row->method, "%s",
            sj->single ? bl_method_name (sj->job.fit.method) : "compare");
  row->aic = row->delta = row->spread_ratio = NAN;
  row->ok = 1;
}

/* A summary row's "null_reasons" (doc/json.md, "Null values"): a failed job's figures have
   its message; a single model has no runner-up; the spread ratio needs 40 rows and no group
   with zero spread (the job's result.json gives the details). */
static void
row_reasons (bl_json *w, const bl_batch_row *r)
{
  bl_json_obj (w, "null_reasons");
  if (!r->ok) {
    bl_json_str (w, "winner", r->message);
    bl_json_str (w, "aic", r->message);
    bl_json_str (w, "delta", r->message);
    bl_json_str (w, "spread_ratio", r->message);
  } else {
    if (!isfinite (r->aic))
      bl_json_str (w, "aic", "no log-likelihood for the model (see its result.json)");
    if (!isfinite (r->delta))
      bl_json_str (w, "delta", strcmp (r->method, "compare") == 0
                   ? "no runner-up was ranked" : "a single model: no runner-up");
    if (!isfinite (r->spread_ratio))
      bl_json_str (w, "spread_ratio", r->n < 40 ? "fewer than 40 rows: no spread ratio"
                   : "a group of rows by fitted value has zero spread: no ratio");
  }
  bl_json_obj_end (w);
}

/* The summary line's figures from RES: the single model's (or why it has none) or the
   winner's with its delta to the runner-up.  BL_ENOMEM (E filled) when the fit failed for
   want of memory: the run stops (run_nomem); else BL_OK. */
static int
row_fill (bl_batch_row *row, const bl_job_result *res, const char *where, bl_err *e)
{
  const bl_fit *fit = bl_job_result_fit (res);
  const bl_compare *cmp = bl_job_result_compare (res);
  long w;
  double second = HUGE_VAL;
  if (fit) {
    if (!bl_fit_stats_get (fit)->converged) {
      if (bl_fit_status (fit)->code == BL_ENOMEM) {
        *e = *bl_fit_status (fit);
        return BL_ENOMEM;
      }
      row_fail (row, bl_fit_status (fit));
      return BL_OK;
    }
    snprintf (row->winner, sizeof row->winner, "%s/%s", bl_family_name (bl_fit_family (fit)),
              bl_fit_link (fit)->name);
    row->aic = bl_fit_stats_get (fit)->aic;
    row->spread_ratio = bl_job_result_spread_ratio (res);
    return BL_OK;
  }
  if ((w = bl_compare_winner (cmp)) < 0) {
    bl_err nf;
    bl_fail (&nf, BL_ENOCONV, where, "no candidate could be fitted");
    row_fail (row, &nf);
    return BL_OK;
  }
  {
    const bl_candidate *k = bl_compare_get (cmp, (size_t) w);
    snprintf (row->winner, sizeof row->winner, "%s", k->id);
    row->aic = bl_compare_integer_y (cmp) ? k->aic_discrete : k->aic;
    row->spread_ratio = k->spread_ratio;
  }
  for (size_t q = 0; q < bl_compare_count (cmp); q++) {
    const bl_candidate *o = bl_compare_get (cmp, q);
    if ((long) q != w && isfinite (o->delta_aic) && o->delta_aic < second)
      second = o->delta_aic;
  }
  row->delta = isfinite (second) ? second : NAN;
  return BL_OK;
}

/* Run the job's model (a comparison or one fit) with the plot series of its report.  RES is
   NULL when the model failed (ROW says why).  BL_ENOMEM (E filled) stops the run; else
   BL_OK. */
static int
job_model (run_ctx *rc, const bl_spec_job *sj, const bl_job_input *in, unsigned long seed,
           const char *where, bl_batch_row *row, bl_job_result **res, bl_err *e)
{
  bl_job_run_opts ro;
  int st;
  bl_job_run_opts_init (&ro);
  ro.task = sj->single ? BL_JOB_FIT : BL_JOB_COMPARE;
  ro.seed = seed;
  ro.plots = 1;
  ro.cancel = rc->opt->cancel;
  st = bl_job_run (&sj->job, in, &ro, res, e);
  if (st == BL_ENOMEM || (st != BL_OK && e->code == BL_ENOMEM))
    return BL_ENOMEM;
  if (st != BL_OK)
    row_fail (row, e);      /* the model failed; or cancelled (then nothing is written) */
  if (*res && st == BL_OK)
    return row_fill (row, *res, where, e);
  return BL_OK;
}

/* The failure document of job SJ, {"job", "status": "failed", "error"}, into the open
   stream F: BL_OK, or BL_EIO when the stream failed. */
static int
render_failed (FILE *f, const bl_spec_job *sj, const bl_batch_row *row)
{
  bl_json w;
  bl_json_init (&w, f);
  bl_json_obj (&w, NULL);
  bl_json_str (&w, "job", sj->name);
  bl_json_str (&w, "status", "failed");
  bl_json_str (&w, "error", row->message);
  bl_json_obj_end (&w);
  return bl_json_finish (&w) ? BL_EIO : BL_OK;
}

/* Render result.json (the compare or fit document, or the failure) and residuals.csv (of
   the winner or the single model) of RES (may be NULL) in memory first, then write them into
   JOBFD: out of memory while rendering leaves neither file.  residuals.csv is written first
   and result.json last, so that a job whose files could not all be rendered or written (a
   full disk) has the failure document as its result.json, or none, never its success
   document; a residuals.csv beside a result.json that could not be written is removed.
   BL_ENOMEM (E filled) stops the run; BL_ECANCEL: cancelled while rendering, nothing
   written; else BL_OK, with ROW failed when a file could not be rendered or written. */
static int
job_files (run_ctx *rc, const bl_spec_job *sj, const bl_job_result *res, const bl_terms *terms,
           const bl_terms *offset, const bl_design *design, int jobfd, const char *where,
           bl_batch_row *row, bl_err *e)
{
  const bl_compare *cmp = res ? bl_job_result_compare (res) : NULL;
  const bl_fit *fit = res ? bl_job_result_fit (res) : NULL;
  const bl_fit *resfit = res ? bl_job_result_model (res) : NULL;
  membuf mb = { NULL, 0, NULL }, mr = { NULL, 0, NULL };
  int have_result = 0, have_resid = 0, st = BL_OK;
  const int model_ok = row->ok;
  if (mem_open (&mb) != 0) {
    st = bl_fail (e, BL_ENOMEM, where, "out of memory rendering 'result.json'");
    goto done;
  }
  {
    const bl_report_info info = { sj->job.data, terms, offset, sj->job.weights, bl_version (),
                                  res ? bl_job_result_nested (res) : NULL, NULL };
    if (cmp)
      st = bl_report_compare_json (mb.f, cmp, design, &info, e);
    else if (fit)
      st = bl_report_fit_json (mb.f, fit, &info, e);
    else
      st = render_failed (mb.f, sj, row);
    st = render_status (&mb, st, where, "result.json", e);
    if (st == BL_ENOMEM)
      goto done;
    if (st != BL_OK)
      row_fail (row, e);
    have_result = st == BL_OK;
    st = BL_OK;
  }
  if (resfit) {
    bl_resid_table *t = NULL;
    if (mem_open (&mr) != 0) {
      st = bl_fail (e, BL_ENOMEM, where, "out of memory rendering 'residuals.csv'");
      goto done;
    }
    t = bl_job_resid_table (res, rc->opt->cancel, e);
    st = t ? bl_report_residuals_csv (mr.f, resfit, t, rc->opt->cancel, e) : e->code;
    bl_resid_table_free (t);
    st = render_status (&mr, st, where, "residuals.csv", e);
    if (st == BL_ENOMEM)
      goto done;
    if (st != BL_OK && st != BL_ECANCEL)
      row_fail (row, e);
    have_resid = st == BL_OK;
    st = BL_OK;
  }
  if (cancelled (rc)) {        /* while rendering (the residual table is long for many rows) */
    st = BL_ECANCEL;
    goto done;
  }
  if (have_resid && write_atomic (jobfd, "residuals.csv", mr.buf, mr.len, where, e) != BL_OK) {
    row_fail (row, e);
    have_resid = 0;
  }
  if (model_ok && !row->ok) {  /* an output failed: result.json says so */
    mem_free (&mb);
    if (mem_open (&mb) != 0) {
      st = bl_fail (e, BL_ENOMEM, where, "out of memory rendering 'result.json'");
      goto done;
    }
    st = render_status (&mb, render_failed (mb.f, sj, row), where, "result.json", e);
    if (st != BL_OK)
      goto done;
    have_result = 1;
  }
  if (!have_result || write_atomic (jobfd, "result.json", mb.buf, mb.len, where, e) != BL_OK) {
    if (have_result)
      row_fail (row, e);
    unlinkat (jobfd, "result.json", 0);   /* no earlier run's result stands for this one */
    if (have_resid)
      unlinkat (jobfd, "residuals.csv", 0);
  }
done:
  mem_free (&mb);
  mem_free (&mr);
  return st;
}

/* Render job I's report section from RES (may be NULL) and keep it for the page.  A single
   model is drawn only while the job is done (a failed job's section says why).  BL_ENOMEM
   (E filled) stops the run; else BL_OK, with ROW failed when the section failed. */
static int
job_section (run_ctx *rc, size_t i, const bl_job_result *res, const bl_design *design,
             unsigned long seed, const char *where, bl_batch_row *row, bl_err *e)
{
  const bl_job_plots *plots = res ? bl_job_result_plots (res) : NULL;
  const bl_compare *cmp = plots ? bl_job_result_compare (res) : NULL;
  const bl_fit *fit = plots && !cmp && row->ok ? bl_job_result_fit (res) : NULL;
  membuf mb = { NULL, 0, NULL };
  int st;
  if (mem_open (&mb) != 0)
    return bl_fail (e, BL_ENOMEM, where, "out of memory rendering the report section");
  st = bl_report_section_html (mb.f, row, cmp, fit, design, seed, plots, rc->opt->cancel, e);
  st = render_status (&mb, st, where, "index.html", e);
  if (st == BL_OK) {
    rc->outs[i].section = mb.buf;
    rc->outs[i].section_len = mb.len;
    mb.buf = NULL;
  } else if (st != BL_ECANCEL && st != BL_ENOMEM) {
    row_fail (row, e);
  }
  mem_free (&mb);
  return st == BL_ENOMEM ? BL_ENOMEM : BL_OK;
}

/* Run job I: its model (job_run.h), its files, its section.  Out of memory anywhere stops the
   run (run_nomem): nothing more is written for this job, and the files it already wrote are
   complete.  A job cut short by the cancel flag writes nothing: its result would describe
   the interruption (a cancelled read or fit), not the data; bl_batch_run reports
   BL_ECANCEL. */
static void
run_job (run_ctx *rc, size_t i)
{
  const bl_spec_job *sj = bl_spec_get (rc->spec, i);
  bl_batch_row *row = &rc->rows[i];
  bl_terms *terms = NULL, *offset = NULL;
  bl_table *table = NULL;
  bl_design *design = NULL;
  bl_job_result *res = NULL;
  bl_err e;
  int jobfd = -1;
  const unsigned long seed = bl_batch_seed (sj->name, sj->job.seed);
  char where[BL_SPEC_NAME_MAX + 16];
  bl_job jl = sj->job;        /* the job with the cancel flag for its table read (shallow) */

  row_start (row, sj);
  snprintf (where, sizeof where, "job '%s'", sj->name);
  bl_err_clear (&e);
  jl.table.cancel = rc->opt->cancel;
  if ((jobfd = open_subdir (rc->outfd, sj->name)) < 0) {
    bl_fail (&e, BL_EIO, where, "cannot use the folder '%s' in the output folder: %s",
             sj->name, errno == ELOOP || errno == ENOTDIR ? "it is a symbolic link or not a "
             "folder" : strerror (errno));
    row_fail (row, &e);
  } else if (bl_job_parse_terms (&sj->job, NULL, &terms, &offset, &e) != BL_OK
             || bl_job_load (&jl, terms, offset, &table, &design, &e) != BL_OK) {
    if (e.code == BL_ENOMEM)
      goto nomem;
    row_fail (row, &e);
  } else {
    const bl_job_input in = { table, design, offset, NULL };
    row->n = bl_design_n (design);
    if (job_model (rc, sj, &in, seed, where, row, &res, &e) != BL_OK)
      goto nomem;
  }
  if (cancelled (rc))
    goto done;
  if (jobfd >= 0) {
    const int st = job_files (rc, sj, res, terms, offset, design, jobfd, where, row, &e);
    if (st == BL_ENOMEM)
      goto nomem;
    if (st == BL_ECANCEL || cancelled (rc))
      goto done;
  }
  if (job_section (rc, i, res, design, seed, where, row, &e) == BL_OK)
    goto done;
nomem:
  run_nomem (rc, sj->name, &e);
done:
  if (jobfd >= 0)
    close (jobfd);
  bl_job_result_free (res);
  bl_design_free (design);
  bl_table_free (table);
  bl_terms_free (terms);
  bl_terms_free (offset);
}

/* A task of the pool (thread.h): job I, unless the run has already stopped (out of memory
   or cancelled); then it returns 1 and the pool begins no more jobs. */
static int
worker (void *arg, size_t i, unsigned k)
{
  run_ctx *rc = arg;
  size_t done;
  struct timespec t;
  (void) k;
  pthread_mutex_lock (&rc->lock);
  if (rc->fatal || (rc->opt->cancel && *rc->opt->cancel)) {
    pthread_mutex_unlock (&rc->lock);
    return 1;
  }
  pthread_mutex_unlock (&rc->lock);
  run_job (rc, i);
  pthread_mutex_lock (&rc->lock);
  done = ++rc->done;
  clock_gettime (CLOCK_MONOTONIC, &t);
  if (rc->opt->progress && !rc->fatal)
    rc->opt->progress (rc->opt->progress_ctx, done, bl_spec_njobs (rc->spec),
                       bl_spec_get (rc->spec, i)->name,
                       (double) (t.tv_sec - rc->t0.tv_sec)
                       + 1e-9 * (double) (t.tv_nsec - rc->t0.tv_nsec));
  pthread_mutex_unlock (&rc->lock);
  return 0;
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

/* summary.json, summary.csv and index.html: all three rendered in memory first, then
   written, so that running out of memory leaves none of them (a write error can still stop
   after the first). */
static int
write_summaries (run_ctx *rc, bl_err *err)
{
  const size_t nj = bl_spec_njobs (rc->spec);
  membuf mj = { NULL, 0, NULL }, mc = { NULL, 0, NULL }, mh = { NULL, 0, NULL };
  bl_json w;
  size_t failed = 0;
  int st = BL_OK;
  const char **sections = NULL;
  if (mem_open (&mj) != 0 || mem_open (&mc) != 0 || mem_open (&mh) != 0) {
    st = bl_fail (err, BL_ENOMEM, "run", "out of memory rendering the summaries");
    goto out;
  }
  /* summary.json */
  bl_report_head_json (&w, mj.f, bl_version (), NULL, NULL);
  bl_json_str (&w, "spec", bl_spec_stem (rc->spec));
  bl_json_arr (&w, "jobs");
  for (size_t i = 0; i < nj; i++) {
    const bl_batch_row *r = &rc->rows[i];
    failed += !r->ok;
    bl_json_obj (&w, NULL);
    bl_json_str (&w, "job", r->job);
    bl_json_str (&w, "status", r->ok ? "done" : "failed");
    bl_json_str (&w, "method", r->method);
    bl_json_str (&w, "winner", r->winner[0] ? r->winner : NULL);
    bl_json_num (&w, "aic", r->aic);
    bl_json_num (&w, "delta", r->delta);
    bl_json_num (&w, "spread_ratio", r->spread_ratio);
    bl_json_size (&w, "n", r->n);
    bl_json_str (&w, "message", r->message);
    row_reasons (&w, r);
    bl_json_obj_end (&w);
  }
  bl_json_arr_end (&w);
  bl_json_size (&w, "failed", failed);
  bl_json_obj_end (&w);
  if (bl_json_finish (&w) != 0 || mem_close (&mj) != 0) {
    st = bl_fail (err, BL_ENOMEM, "run", "out of memory rendering 'summary.json'");
    goto out;
  }
  /* summary.csv */
  fputs ("job,status,method,winner,aic,delta,spread_ratio,n,message\n", mc.f);
  for (size_t i = 0; i < nj; i++) {
    const bl_batch_row *r = &rc->rows[i];
    csv_field (mc.f, r->job);
    fprintf (mc.f, ",%s,", r->ok ? "done" : "failed");
    csv_field (mc.f, r->method);
    fputc (',', mc.f);
    csv_field (mc.f, r->winner);
    csv_num (mc.f, r->aic);
    csv_num (mc.f, r->delta);
    csv_num (mc.f, r->spread_ratio);
    fprintf (mc.f, ",%zu,", r->n);
    csv_field (mc.f, r->message);
    fputc ('\n', mc.f);
  }
  if (ferror (mc.f) || mem_close (&mc) != 0) {
    st = bl_fail (err, BL_ENOMEM, "run", "out of memory rendering 'summary.csv'");
    goto out;
  }
  /* index.html */
  sections = bl_calloc (nj ? nj : 1, sizeof *sections);
  if (!sections) {
    st = bl_fail (err, BL_ENOMEM, "run", "out of memory rendering 'index.html'");
    goto out;
  }
  for (size_t i = 0; i < nj; i++)
    sections[i] = rc->outs[i].section ? rc->outs[i].section : "";
  st = bl_report_html_page (mh.f, bl_spec_stem (rc->spec), rc->rows, sections, nj, err);
  if (st != BL_OK || mem_close (&mh) != 0) {
    if (st == BL_OK || st == BL_EIO)
      st = bl_fail (err, BL_ENOMEM, "run", "out of memory rendering 'index.html'");
    goto out;
  }
  st = write_atomic (rc->outfd, "summary.json", mj.buf, mj.len, "run", err);
  if (st == BL_OK)
    st = write_atomic (rc->outfd, "summary.csv", mc.buf, mc.len, "run", err);
  if (st == BL_OK)
    st = write_atomic (rc->outfd, "index.html", mh.buf, mh.len, "run", err);
out:
  bl_free (sections);
  mem_free (&mj);
  mem_free (&mc);
  mem_free (&mh);
  return st;
}

/* Add OUTDIR/A[/B] as an output labelled LABEL (NOFOLLOW: the run replaces names inside
   OUTDIR, never what a link there points to). */
static int
add_out (bl_path_set *ps, const char *outdir, const char *a, const char *b, const char *label,
         bl_err *err)
{
  const size_t n = strlen (outdir) + strlen (a) + (b ? strlen (b) : 0) + 3;
  char *p = bl_malloc (n);
  int st;
  if (!p)
    return bl_fail (err, BL_ENOMEM, "run", "out of memory");
  snprintf (p, n, "%s/%s%s%s", outdir, a, b ? "/" : "", b ? b : "");
  st = bl_path_set_add (ps, p, BL_PATH_OUTPUT | BL_PATH_NOFOLLOW, label, err);
  bl_free (p);
  return st;
}

/* Whether a file or folder the run would write (OUTDIR itself, its summaries, each job's
   folder and files) is one of its inputs (the spec file, each job's data): BL_OK, or
   BL_ESPEC naming both (bl_path_set_check), or BL_ENOMEM.  Nothing is made or changed. */
static int
check_paths (const bl_spec *spec, const char *outdir, const bl_batch_opts *opt, bl_err *err)
{
  const char *const label = opt->outdir_label ? opt->outdir_label : "OUTDIR";
  const char *const sname = opt->spec_path ? opt->spec_path : bl_spec_stem (spec);
  static const char *const top[] = { "summary.json", "summary.csv", "index.html" };
  bl_path_set *ps = bl_path_set_new (err);
  int st = ps ? BL_OK : BL_ENOMEM;
  if (st == BL_OK)
    st = bl_path_set_add (ps, outdir, BL_PATH_OUTPUT | BL_PATH_NOFOLLOW, label, err);
  for (size_t i = 0; st == BL_OK && i < sizeof top / sizeof top[0]; i++)
    st = add_out (ps, outdir, top[i], NULL, label, err);
  for (size_t i = 0; st == BL_OK && i < bl_spec_njobs (spec); i++) {
    const char *const name = bl_spec_get (spec, i)->name;
    st = add_out (ps, outdir, name, NULL, label, err);
    if (st == BL_OK)
      st = add_out (ps, outdir, name, "result.json", label, err);
    if (st == BL_OK)
      st = add_out (ps, outdir, name, "residuals.csv", label, err);
  }
  if (st == BL_OK && opt->spec_path)
    st = bl_path_set_add (ps, opt->spec_path, BL_PATH_INPUT, "SPEC", err);
  for (size_t i = 0; st == BL_OK && i < bl_spec_njobs (spec); i++) {
    const bl_spec_job *sj = bl_spec_get (spec, i);
    char lab[BL_SPEC_NAME_MAX + 4200];
    snprintf (lab, sizeof lab, "the data of job '%s' (%s:%zu)", sj->name, sname, sj->line);
    st = bl_path_set_add (ps, sj->job.data, BL_PATH_INPUT, lab, err);
  }
  if (st == BL_OK)
    st = bl_path_set_check (ps, err);
  bl_path_set_free (ps);
  return st;
}

/* Whether a file can be made in the folder DIRFD: one is created and removed (named as a
   temporary of write_atomic, so that one left by a crash is removed by the next run).
   BL_OK, or BL_EIO naming OUTDIR. */
static int
probe_writable (int dirfd, const char *outdir, bl_err *err)
{
  char tmp[128];
  int fd;
  snprintf (tmp, sizeof tmp, ".index.html.tmp-%ld-100-0", (long) getpid ());
  fd = openat (dirfd, tmp, O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0644);
  if (fd < 0 && errno == EEXIST) {
    unlinkat (dirfd, tmp, 0);
    fd = openat (dirfd, tmp, O_WRONLY | O_CREAT | O_EXCL | O_NOFOLLOW | O_CLOEXEC, 0644);
  }
  if (fd < 0)
    return bl_fail (err, BL_EIO, outdir, "the output folder is not writable: %s",
                    strerror (errno));
  close (fd);
  if (unlinkat (dirfd, tmp, 0) != 0)
    return bl_fail (err, BL_EIO, outdir, "the output folder is not writable (a test file "
                    "could not be removed): %s", strerror (errno));
  return BL_OK;
}

int
bl_batch_run (const bl_spec *spec, const char *outdir, const bl_batch_opts *opt,
              bl_batch_row *rows, bl_err *err)
{
  run_ctx rc;
  const size_t nj = bl_spec_njobs (spec);
  unsigned nt = opt->jobs ? opt->jobs : 1;
  bl_pool_opts po;
  int st = BL_OK;
  struct stat sb;

  memset (&rc, 0, sizeof rc);
  rc.spec = spec;
  rc.opt = opt;
  if ((st = check_paths (spec, outdir, opt, err)) != BL_OK)
    return st;
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
  if ((st = probe_writable (rc.outfd, outdir, err)) != BL_OK) {
    close (rc.outfd);
    return st;
  }
  /* a run killed outright (SIGKILL, a crash) may have left temporaries beside the final
     names; they never hold a final name, and this run removes them (stale_tmp) */
  remove_stale (rc.outfd);
  for (size_t i = 0; i < nj; i++) {
    const int jfd = openat (rc.outfd, bl_spec_get (spec, i)->name,
                            O_RDONLY | O_DIRECTORY | O_NOFOLLOW | O_CLOEXEC);
    if (jfd >= 0) {
      remove_stale (jfd);
      close (jfd);
    }
  }
  rc.rows = rows;
  rc.outs = bl_calloc (nj ? nj : 1, sizeof *rc.outs);
  if (!rc.outs) {
    close (rc.outfd);
    return bl_fail (err, BL_ENOMEM, "run", "out of memory");
  }
  pthread_mutex_init (&rc.lock, NULL);
  clock_gettime (CLOCK_MONOTONIC, &rc.t0);
  bl_pool_opts_init (&po);
  po.threads = nt;            /* at most BL_POOL_MAX (16), and no more than the jobs */
  bl_pool_run (&po, nj, worker, &rc, NULL);
  pthread_mutex_destroy (&rc.lock);
  if (rc.fatal) {
    st = rc.fatal;
    if (err)
      *err = rc.fatal_err;
  } else if (opt->cancel && *opt->cancel)
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

int
bl_report_job_html (FILE *out, const bl_batch_row *row, const bl_compare *c,
                    const bl_fit *fit, const bl_design *d, unsigned long seed,
                    volatile sig_atomic_t *cancel, bl_err *err)
{
  bl_job_plots plots;
  const int draw = row && !(c && fit) && (d || fit)
                   && (c || (fit && bl_fit_stats_get (fit)->converged));
  int st;
  memset (&plots, 0, sizeof plots);
  if (draw && (st = bl_job_plots_init (&plots, c, fit, seed, cancel, err)) != BL_OK)
    return st;
  st = bl_report_section_html (out, row, c, fit, d, seed, draw ? &plots : NULL, cancel, err);
  bl_job_plots_clear (&plots);
  return st;
}
