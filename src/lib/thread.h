/* thread.h -- the library's threads: one start helper and the three ways they are used.

   Every thread of libballast starts through bl_thread_start, with a bounded stack.  The
   library's loops are small and non-recursive; a thread with a bounded stack costs less to
   start (and far less under AddressSanitizer, which clears the shadow of the whole stack)
   than one with the default 8 MiB.  Three protocols are built on it, and nothing else in the
   library creates or synchronizes threads:

   - the partner (bl_partner): one helper thread kept for the life of an object (a read, an
     IRLS workspace) that runs one task per step, handed over and awaited by the owner
     (the go/done handshake).  Used by the reader's speculative parse and by IRLS passes.
   - the slot queue (bl_slots): a single producer and a single consumer over N buffers (the
     gzip source inflates ahead of the reader).  The queue orders only slot indices; the
     buffers stay with the caller.
   - the pool (bl_pool_run): a fixed number of threads for one call, task I always on worker
     I mod THREADS (batch jobs).

   Determinism: none of these decides what is computed, only where.  A thread that cannot be
   started is reported to the caller (a nonzero return, or bl_pool_run's STARTED), and the work
   it would have done runs on the calling thread with the same task-to-worker assignment, so
   results never depend on whether threads could be created.  Nothing here allocates memory:
   the structures live inside their owner, so an allocation failure can only come from the
   callers' own allocations (always BL_ENOMEM, never a skipped task).

   The structures are transparent only so that owners can embed them (as they embed pthread
   types); their fields are private to thread.c.  This header is internal (not installed). */
#ifndef BALLAST_THREAD_H
#define BALLAST_THREAD_H
#include <pthread.h>
#include <stddef.h>

/* Stack size of the helper threads: 1 MiB (the loops use a few KiB). */
#define BL_THREAD_STACK ((size_t) 1 << 20)
/* Most threads one bl_pool_run uses (the caller included); more are clamped to this. */
#define BL_POOL_MAX 16u

/* pthread_create with a stack of STACK bytes (0: BL_THREAD_STACK; the system default when
   the size cannot be set).  Returns 0 on success, else the error number, as pthread_create
   does; on failure *TID is unspecified and nothing needs to be joined. */
int bl_thread_start_stack (pthread_t *tid, void *(*fn) (void *), void *arg, size_t stack);
/* bl_thread_start_stack with BL_THREAD_STACK. */
int bl_thread_start (pthread_t *tid, void *(*fn) (void *), void *arg);
/* Wait for a thread started by bl_thread_start to end. */
void bl_thread_join (pthread_t tid);

/* ------------------------------------------------------------------ partner */

/* A partner thread.  Zero it (memset or = { 0 }) before the first bl_partner_start; set
   STACK to a stack size in bytes (0: BL_THREAD_STACK) before starting if needed. */
typedef struct bl_partner {
  size_t stack;
  /* private to thread.c */
  pthread_t tid;
  pthread_mutex_t lock;
  pthread_cond_t go, done;
  void (*fn) (void *);
  void *arg;
  int running, job, quit;
} bl_partner;

/* Start the partner thread, which then waits for tasks.  Returns 0 (running), or an error
   number when the thread or its mutex and conditions could not be made: PT is then not
   running, holds nothing, and may be started again later.  Calling it on a running partner
   returns 0 and does nothing. */
int bl_partner_start (bl_partner *pt);
/* Nonzero while the partner thread runs (between a successful start and bl_partner_stop). */
int bl_partner_running (const bl_partner *pt);
/* Hand FN (ARG) to the running partner, which calls it once.  The mutex hand-over orders
   every write the caller made before this call before the partner's reads.  At most one task
   is out at a time: call bl_partner_wait before the next bl_partner_post. */
void bl_partner_post (bl_partner *pt, void (*fn) (void *), void *arg);
/* Wait until the posted task has returned; its writes are then visible to the caller. */
void bl_partner_wait (bl_partner *pt);
/* End the thread (after the task out, if any, has returned) and release what PT holds.  PT
   is then as after zeroing (STACK kept).  Accepts a partner that never started. */
void bl_partner_stop (bl_partner *pt);

/* ------------------------------------------------------------------ slot queue */

/* N slots (buffers the caller owns, numbered 0 .. N-1) passed from one producer thread to
   one consumer in a fixed cyclic order.  Zero-initialized structures are not valid: call
   bl_slots_init. */
typedef struct bl_slots {
  /* private to thread.c */
  pthread_mutex_t lock;
  pthread_cond_t filled, freed;
  size_t n, head, count;
  int finished;               /* the producer said it will publish nothing more */
  int stop;                   /* the consumer asked the producer to stop */
} bl_slots;

/* Make Q for N slots (N >= 1), all free.  Returns 0, or an error number (Q holds nothing). */
int bl_slots_init (bl_slots *q, size_t n);
/* Release Q, which no thread may be using. */
void bl_slots_destroy (bl_slots *q);
/* Producer: wait for a free slot and return its index, or (size_t) -1 when the consumer has
   called bl_slots_stop (the queue is then marked finished). */
size_t bl_slots_claim (bl_slots *q);
/* Producer: the slot last claimed now holds data for the consumer. */
void bl_slots_publish (bl_slots *q);
/* Producer: nothing more will be published (the end, or a failure the caller records before
   this call: the consumer sees those writes once bl_slots_next reports the end). */
void bl_slots_finish (bl_slots *q);
/* Consumer: wait for the oldest published slot and return its index, or (size_t) -1 when
   every published slot has been released and the producer has finished. */
size_t bl_slots_next (bl_slots *q);
/* Consumer: the slot bl_slots_next returned is consumed; it goes back to the producer. */
void bl_slots_release (bl_slots *q);
/* Consumer: ask the producer to stop at its next bl_slots_claim (it is then to return). */
void bl_slots_stop (bl_slots *q);

/* ------------------------------------------------------------------ pool */

/* A task of a pool: work on task TASK as worker WORKER (0 .. threads - 1; the same worker
   for the same task whatever thread runs it, so per-worker buffers may be indexed by it).
   Returns 0 to go on, anything else to stop the pool. */
typedef int (*bl_pool_fn) (void *ctx, size_t task, unsigned worker);

typedef struct bl_pool_opts {
  unsigned threads;           /* workers, the calling thread included (default 1) */
  size_t stack;               /* stack of each started thread: 0 for BL_THREAD_STACK */
} bl_pool_opts;

/* Default options: one thread, BL_THREAD_STACK. */
void bl_pool_opts_init (bl_pool_opts *opt);
/* Run tasks 0 .. NTASKS - 1.  Worker K runs tasks K, K + T, K + 2T, ... in increasing order,
   T = min (opt->threads, BL_POOL_MAX, NTASKS) (at least 1); the calling thread is worker 0
   and starts T - 1 threads for the others.  A worker whose thread cannot be started has its
   tasks run by the calling thread after worker 0's, in worker order.  Once a task returns
   nonzero no worker begins another task (those running finish).  Returns 0 when every task
   returned 0, else the value returned by the failing task of lowest index.  *STARTED (when
   STARTED is not NULL) is set to the number of threads that ran tasks, the caller included;
   every thread has ended when bl_pool_run returns. */
int bl_pool_run (const bl_pool_opts *opt, size_t ntasks, bl_pool_fn fn, void *ctx,
                 unsigned *started);

#endif
