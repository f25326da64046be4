/* thread.c -- the thread start helper, the partner, the slot queue and the pool (see
   thread.h).  Every mutex and condition variable of the library lives here. */
#include "config.h"
#include <stdint.h>
#include <string.h>
#include "thread.h"

int
bl_thread_start_stack (pthread_t *tid, void *(*fn) (void *), void *arg, size_t stack)
{
  pthread_attr_t attr;
  int rc;
  if (pthread_attr_init (&attr) != 0)
    return pthread_create (tid, NULL, fn, arg);
  if (pthread_attr_setstacksize (&attr, stack ? stack : BL_THREAD_STACK) != 0) {
    pthread_attr_destroy (&attr);
    return pthread_create (tid, NULL, fn, arg);
  }
  rc = pthread_create (tid, &attr, fn, arg);
  pthread_attr_destroy (&attr);
  return rc;
}

int
bl_thread_start (pthread_t *tid, void *(*fn) (void *), void *arg)
{
  return bl_thread_start_stack (tid, fn, arg, BL_THREAD_STACK);
}

void
bl_thread_join (pthread_t tid)
{
  pthread_join (tid, NULL);
}

/* ------------------------------------------------------------------ partner */

/* The partner thread: one task per JOB, until QUIT.  The mutex orders the owner's writes
   before the task's reads (JOB set under it) and the task's writes before the owner's reads
   (JOB cleared under it). */
static void *
partner_loop (void *arg)
{
  bl_partner *pt = arg;
  pthread_mutex_lock (&pt->lock);
  for (;;) {
    while (!pt->job && !pt->quit)
      pthread_cond_wait (&pt->go, &pt->lock);
    if (pt->quit)
      break;
    pthread_mutex_unlock (&pt->lock);
    pt->fn (pt->arg);
    pthread_mutex_lock (&pt->lock);
    pt->job = 0;
    pthread_cond_signal (&pt->done);
  }
  pthread_mutex_unlock (&pt->lock);
  return NULL;
}

int
bl_partner_start (bl_partner *pt)
{
  int rc;
  if (pt->running)
    return 0;
  pt->job = pt->quit = 0;
  if ((rc = pthread_mutex_init (&pt->lock, NULL)) != 0)
    return rc;
  if ((rc = pthread_cond_init (&pt->go, NULL)) != 0)
    goto no_go;
  if ((rc = pthread_cond_init (&pt->done, NULL)) != 0)
    goto no_done;
  if ((rc = bl_thread_start_stack (&pt->tid, partner_loop, pt, pt->stack)) != 0)
    goto no_thread;
  pt->running = 1;
  return 0;
no_thread:
  pthread_cond_destroy (&pt->done);
no_done:
  pthread_cond_destroy (&pt->go);
no_go:
  pthread_mutex_destroy (&pt->lock);
  return rc;
}

int
bl_partner_running (const bl_partner *pt)
{
  return pt->running;
}

void
bl_partner_post (bl_partner *pt, void (*fn) (void *), void *arg)
{
  pthread_mutex_lock (&pt->lock);
  pt->fn = fn;
  pt->arg = arg;
  pt->job = 1;
  pthread_cond_signal (&pt->go);
  pthread_mutex_unlock (&pt->lock);
}

void
bl_partner_wait (bl_partner *pt)
{
  pthread_mutex_lock (&pt->lock);
  while (pt->job)
    pthread_cond_wait (&pt->done, &pt->lock);
  pthread_mutex_unlock (&pt->lock);
}

void
bl_partner_stop (bl_partner *pt)
{
  const size_t stack = pt->stack;
  if (!pt->running)
    return;
  bl_partner_wait (pt);
  pthread_mutex_lock (&pt->lock);
  pt->quit = 1;
  pthread_cond_signal (&pt->go);
  pthread_mutex_unlock (&pt->lock);
  bl_thread_join (pt->tid);
  pthread_cond_destroy (&pt->done);
  pthread_cond_destroy (&pt->go);
  pthread_mutex_destroy (&pt->lock);
  memset (pt, 0, sizeof *pt);
  pt->stack = stack;
}

/* ------------------------------------------------------------------ slot queue */

/* Slots head .. head + count - 1 (mod n) hold published data; the consumer owns the head
   slot's bytes while count > 0, the producer owns the slot it claimed, and the mutex orders
   the hand-overs. */
int
bl_slots_init (bl_slots *q, size_t n)
{
  int rc;
  memset (q, 0, sizeof *q);
  q->n = n ? n : 1;
  if ((rc = pthread_mutex_init (&q->lock, NULL)) != 0)
    return rc;
  if ((rc = pthread_cond_init (&q->filled, NULL)) != 0)
    goto no_filled;
  if ((rc = pthread_cond_init (&q->freed, NULL)) != 0)
    goto no_freed;
  return 0;
no_freed:
  pthread_cond_destroy (&q->filled);
no_filled:
  pthread_mutex_destroy (&q->lock);
  return rc;
}

void
bl_slots_destroy (bl_slots *q)
{
  pthread_cond_destroy (&q->freed);
  pthread_cond_destroy (&q->filled);
  pthread_mutex_destroy (&q->lock);
}

size_t
bl_slots_claim (bl_slots *q)
{
  size_t slot;
  pthread_mutex_lock (&q->lock);
  while (q->count == q->n && !q->stop)
    pthread_cond_wait (&q->freed, &q->lock);
  if (q->stop) {
    q->finished = 1;
    pthread_mutex_unlock (&q->lock);
    return SIZE_MAX;
  }
  slot = (q->head + q->count) % q->n;
  pthread_mutex_unlock (&q->lock);
  return slot;
}

void
bl_slots_publish (bl_slots *q)
{
  pthread_mutex_lock (&q->lock);
  q->count++;
  pthread_cond_signal (&q->filled);
  pthread_mutex_unlock (&q->lock);
}

void
bl_slots_finish (bl_slots *q)
{
  pthread_mutex_lock (&q->lock);
  q->finished = 1;
  pthread_cond_signal (&q->filled);
  pthread_mutex_unlock (&q->lock);
}

size_t
bl_slots_next (bl_slots *q)
{
  size_t slot = SIZE_MAX;
  pthread_mutex_lock (&q->lock);
  while (q->count == 0 && !q->finished)
    pthread_cond_wait (&q->filled, &q->lock);
  if (q->count > 0)
    slot = q->head;
  pthread_mutex_unlock (&q->lock);
  return slot;
}

void
bl_slots_release (bl_slots *q)
{
  pthread_mutex_lock (&q->lock);
  q->head = (q->head + 1) % q->n;
  q->count--;
  pthread_cond_signal (&q->freed);
  pthread_mutex_unlock (&q->lock);
}

void
bl_slots_stop (bl_slots *q)
{
  pthread_mutex_lock (&q->lock);
  q->stop = 1;
  pthread_cond_signal (&q->freed);
  pthread_mutex_unlock (&q->lock);
}

/* ------------------------------------------------------------------ pool */

typedef struct pool {
  bl_pool_fn fn;
  void *ctx;
  size_t ntasks;
  unsigned nthreads;
  int locked;                 /* LOCK is initialized (else only the caller runs tasks) */
  pthread_mutex_t lock;
  int stop;                   /* a task returned nonzero: begin no more */
  size_t fail_task;           /* the lowest failing task so far (SIZE_MAX: none) */
  int fail_status;
} pool;

typedef struct pool_worker {
  pool *pl;
  unsigned k;
} pool_worker;

static int
pool_stopped (pool *pl)
{
  int stop;
  if (!pl->locked)
    return pl->stop;
  pthread_mutex_lock (&pl->lock);
  stop = pl->stop;
  pthread_mutex_unlock (&pl->lock);
  return stop;
}

static void
pool_failed (pool *pl, size_t task, int status)
{
  if (pl->locked)
    pthread_mutex_lock (&pl->lock);
  pl->stop = 1;
  if (task < pl->fail_task) {
    pl->fail_task = task;
    pl->fail_status = status;
  }
  if (pl->locked)
    pthread_mutex_unlock (&pl->lock);
}

/* Worker K's share: tasks K, K + T, ..., until the pool stops. */
static void
pool_share (pool *pl, unsigned k)
{
  for (size_t i = k; i < pl->ntasks; i += pl->nthreads) {
    int st;
    if (pool_stopped (pl))
      return;
    if ((st = pl->fn (pl->ctx, i, k)) != 0) {
      pool_failed (pl, i, st);
      return;
    }
  }
}

static void *
pool_main (void *arg)
{
  pool_worker *pw = arg;
  pool_share (pw->pl, pw->k);
  return NULL;
}

void
bl_pool_opts_init (bl_pool_opts *opt)
{
  opt->threads = 1;
  opt->stack = 0;
}

int
bl_pool_run (const bl_pool_opts *opt, size_t ntasks, bl_pool_fn fn, void *ctx,
             unsigned *started)
{
  pool pl;
  pool_worker pw[BL_POOL_MAX];
  pthread_t tid[BL_POOL_MAX];
  int up[BL_POOL_MAX];
  unsigned nt = opt && opt->threads ? opt->threads : 1, ran = 1;
  if (nt > BL_POOL_MAX)
    nt = BL_POOL_MAX;
  if (nt > ntasks)
    nt = ntasks ? (unsigned) ntasks : 1;
  memset (&pl, 0, sizeof pl);
  pl.fn = fn;
  pl.ctx = ctx;
  pl.ntasks = ntasks;
  pl.nthreads = nt;
  pl.fail_task = SIZE_MAX;
  pl.locked = nt > 1 && pthread_mutex_init (&pl.lock, NULL) == 0;
  for (unsigned k = 1; k < nt; k++) {
    pw[k].pl = &pl;
    pw[k].k = k;
    up[k] = pl.locked
            && bl_thread_start_stack (&tid[k], pool_main, &pw[k], opt ? opt->stack : 0) == 0;
    ran += (unsigned) up[k];
  }
  pool_share (&pl, 0);
  for (unsigned k = 1; k < nt; k++)
    if (!up[k])
      pool_share (&pl, k);      /* no thread for worker K: its tasks here, in its order */
  for (unsigned k = 1; k < nt; k++)
    if (up[k])
      bl_thread_join (tid[k]);
  if (pl.locked)
    pthread_mutex_destroy (&pl.lock);
  if (started)
    *started = ran;
  return pl.fail_task == SIZE_MAX ? 0 : pl.fail_status;
}
