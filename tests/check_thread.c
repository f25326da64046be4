/* check_thread.c -- tests for thread.c: the start helper, the partner, the slot queue and the
   pool (every task run once, on its fixed worker, errors propagated, failed starts reported
   and their work done by the caller).  Also run under ThreadSanitizer by 'make check-tsan'. */
#include <check.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "thread.h"
#include "testutil.h"

/* A stack no system can map (a quarter of the 64-bit address space): pthread_create fails
   with it, so every "the thread could not be started" path can be taken on purpose. */
#define HUGE_STACK ((size_t) 1 << 62)

/* ------------------------------------------------------------------ start helper */

static void *
set_flag (void *arg)
{
  *(int *) arg = 1;
  return NULL;
}

START_TEST (thread_start_join)
{
  pthread_t tid;
  int flag = 0;
  ck_assert_int_eq (bl_thread_start (&tid, set_flag, &flag), 0);
  bl_thread_join (tid);
  ck_assert_int_eq (flag, 1);       /* the join orders the thread's write before this read */
  flag = 0;
  ck_assert_int_eq (bl_thread_start_stack (&tid, set_flag, &flag, 0), 0);
  bl_thread_join (tid);
  ck_assert_int_eq (flag, 1);
}
END_TEST

START_TEST (thread_start_failure_reported)
{
  pthread_t tid;
  int flag = 0;
  ck_assert_int_ne (bl_thread_start_stack (&tid, set_flag, &flag, HUGE_STACK), 0);
  ck_assert_int_eq (flag, 0);       /* nothing ran */
}
END_TEST

/* ------------------------------------------------------------------ partner */

typedef struct step {
  const int *in;
  long long sum;
  size_t n;
  int calls;
} step;

static void
sum_step (void *arg)
{
  step *s = arg;
  long long sum = 0;
  for (size_t i = 0; i < s->n; i++)
    sum += s->in[i];
  s->sum = sum;
  s->calls++;
}

START_TEST (thread_partner_steps)
{
  /* One thread for many steps: each posted task runs exactly once, and between post and
     wait the caller works on its own data; the inputs are rewritten between steps (the
     hand-over must order them before the partner reads them). */
  enum { N = 1000, STEPS = 200 };
  int *in = malloc (N * sizeof *in);
  bl_partner pt;
  step s;
  ck_assert_ptr_nonnull (in);
  memset (&pt, 0, sizeof pt);
  memset (&s, 0, sizeof s);
  ck_assert_int_eq (bl_partner_running (&pt), 0);
  ck_assert_int_eq (bl_partner_start (&pt), 0);
  ck_assert_int_ne (bl_partner_running (&pt), 0);
  ck_assert_int_eq (bl_partner_start (&pt), 0);    /* already running: nothing happens */
  for (int k = 0; k < STEPS; k++) {
    long long mine = 0;
    for (int i = 0; i < N; i++)
      in[i] = k * i - 7;
    s.in = in;
    s.n = N;
    bl_partner_post (&pt, sum_step, &s);
    for (int i = 0; i < N; i++)
      mine += (long long) k * i - 7;
    bl_partner_wait (&pt);
    ck_assert_int_eq (s.calls, k + 1);
    ck_assert_msg (s.sum == mine, "step %d: sum %lld, expected %lld", k, s.sum, mine);
  }
  bl_partner_stop (&pt);
  ck_assert_int_eq (bl_partner_running (&pt), 0);
  bl_partner_stop (&pt);            /* stopping twice is harmless */
  /* a stopped partner starts again */
  ck_assert_int_eq (bl_partner_start (&pt), 0);
  bl_partner_post (&pt, sum_step, &s);
  bl_partner_stop (&pt);            /* waits for the task out */
  ck_assert_int_eq (s.calls, STEPS + 1);
  free (in);
}
END_TEST

START_TEST (thread_partner_failed_start)
{
  bl_partner pt;
  memset (&pt, 0, sizeof pt);
  pt.stack = HUGE_STACK;
  ck_assert_int_ne (bl_partner_start (&pt), 0);
  ck_assert_int_eq (bl_partner_running (&pt), 0);
  bl_partner_stop (&pt);            /* accepted on a partner that never started */
  pt.stack = 0;                     /* and it may be started later */
  ck_assert_int_eq (bl_partner_start (&pt), 0);
  bl_partner_stop (&pt);
}
END_TEST

/* ------------------------------------------------------------------ slot queue */

typedef struct prod {
  bl_slots *q;
  unsigned *buf;              /* one value per slot */
  unsigned count;             /* values to publish, 0 .. count - 1 */
  unsigned made;
} prod;

static void *
producer_run (void *arg)
{
  prod *p = arg;
  for (unsigned v = 0; v < p->count; v++) {
    const size_t slot = bl_slots_claim (p->q);
    if (slot == SIZE_MAX)
      return NULL;
    p->buf[slot] = v;
    p->made = v + 1;
    bl_slots_publish (p->q);
  }
  bl_slots_finish (p->q);
  return NULL;
}

START_TEST (thread_slots_order)
{
  /* Every value arrives once and in order through a 3-slot queue, then the end. */
  bl_slots q;
  unsigned buf[3];
  prod p = { &q, buf, 5000, 0 };
  pthread_t tid;
  ck_assert_int_eq (bl_slots_init (&q, 3), 0);
  ck_assert_int_eq (bl_thread_start (&tid, producer_run, &p), 0);
  for (unsigned v = 0; v < p.count; v++) {
    const size_t slot = bl_slots_next (&q);
    ck_assert_msg (slot == v % 3, "value %u in slot %zu", v, slot);
    ck_assert_uint_eq (buf[slot], v);
    bl_slots_release (&q);
  }
  ck_assert_uint_eq (bl_slots_next (&q), SIZE_MAX);
  ck_assert_uint_eq (bl_slots_next (&q), SIZE_MAX);   /* the end stays the end */
  bl_thread_join (tid);
  bl_slots_destroy (&q);
}
END_TEST

START_TEST (thread_slots_stop)
{
  /* The consumer stops a producer that waits for a free slot: it returns, having filled no
     more than the slots and the one value taken. */
  bl_slots q;
  unsigned buf[2];
  prod p = { &q, buf, 1000000, 0 };
  pthread_t tid;
  ck_assert_int_eq (bl_slots_init (&q, 2), 0);
  ck_assert_int_eq (bl_thread_start (&tid, producer_run, &p), 0);
  ck_assert_uint_eq (bl_slots_next (&q), 0);
  ck_assert_uint_eq (buf[0], 0);
  bl_slots_release (&q);
  bl_slots_stop (&q);
  bl_thread_join (tid);
  ck_assert_msg (p.made <= 3, "the producer made %u values after the stop", p.made);
  bl_slots_destroy (&q);
}
END_TEST

/* ------------------------------------------------------------------ pool */

#define TASKS 103

typedef struct tally {
  int runs[TASKS];            /* times each task ran */
  unsigned worker[TASKS];     /* the worker it ran as */
  double out[TASKS];
  size_t fail_from;           /* tasks >= this (and in FAIL_SET) return their status */
  int fail_every;             /* nonzero: only tasks with task % fail_every == 0 fail */
} tally;

static int
tally_task (void *ctx, size_t task, unsigned worker)
{
  tally *t = ctx;
  t->runs[task]++;
  t->worker[task] = worker;
  t->out[task] = 1.0 / (double) (task + 1);
  if (task >= t->fail_from && (!t->fail_every || task % (size_t) t->fail_every == 0))
    return 100 + (int) task;
  return 0;
}

START_TEST (thread_pool_every_task_once)
{
  /* At any thread count (more than the tasks, more than BL_POOL_MAX too) every task runs
     exactly once, on worker task mod T, and the results sit where their task puts them. */
  const unsigned counts[] = { 0, 1, 2, 3, 7, 16, 40, 200 };
  for (size_t c = 0; c < sizeof counts / sizeof counts[0]; c++) {
    bl_pool_opts opt;
    tally *t = calloc (1, sizeof *t);
    unsigned started = 0, nt;
    ck_assert_ptr_nonnull (t);
    t->fail_from = SIZE_MAX;
    bl_pool_opts_init (&opt);
    ck_assert_uint_eq (opt.threads, 1);
    opt.threads = counts[c];
    ck_assert_int_eq (bl_pool_run (&opt, TASKS, tally_task, t, &started), 0);
    nt = counts[c] == 0 ? 1 : counts[c] > BL_POOL_MAX ? BL_POOL_MAX : counts[c];
    ck_assert_uint_eq (started, nt);
    for (size_t i = 0; i < TASKS; i++) {
      ck_assert_msg (t->runs[i] == 1, "threads %u: task %zu ran %d times", counts[c], i,
                     t->runs[i]);
      ck_assert_uint_eq (t->worker[i], i % nt);
      ck_assert (t->out[i] == 1.0 / (double) (i + 1));
    }
    free (t);
  }
}
END_TEST

START_TEST (thread_pool_few_tasks)
{
  bl_pool_opts opt;
  tally *t = calloc (1, sizeof *t);
  unsigned started = 99;
  ck_assert_ptr_nonnull (t);
  t->fail_from = SIZE_MAX;
  bl_pool_opts_init (&opt);
  opt.threads = 8;
  ck_assert_int_eq (bl_pool_run (&opt, 0, tally_task, t, &started), 0);   /* no tasks */
  ck_assert_uint_eq (started, 1);
  ck_assert_int_eq (bl_pool_run (&opt, 3, tally_task, t, &started), 0);   /* T = 3 */
  ck_assert_uint_eq (started, 3);
  for (size_t i = 0; i < 3; i++) {
    ck_assert_int_eq (t->runs[i], 1);
    ck_assert_uint_eq (t->worker[i], i);
  }
  ck_assert_int_eq (t->runs[3], 0);
  ck_assert_int_eq (bl_pool_run (NULL, 2, tally_task, t, NULL), 0);       /* defaults */
  ck_assert_int_eq (t->runs[0], 2);
  ck_assert_uint_eq (t->worker[1], 0);
  free (t);
}
END_TEST

START_TEST (thread_pool_error_propagated)
{
  /* One thread: tasks run in order, the first failure stops the pool at once and its status
     is returned.  Several threads: the status is that of the lowest failing task, no task
     runs twice, and worker 0's tasks up to the failing one all ran. */
  const unsigned counts[] = { 1, 2, 4 };
  for (size_t c = 0; c < 3; c++) {
    const unsigned nt = counts[c];
    bl_pool_opts opt;
    tally *t = calloc (1, sizeof *t);
    int st;
    ck_assert_ptr_nonnull (t);
    t->fail_from = 40;
    t->fail_every = 4;          /* 40, 44, 48, ...: all on worker 0, as T divides 4, so 40
                                   is the first failure whatever the timing */
    bl_pool_opts_init (&opt);
    opt.threads = nt;
    st = bl_pool_run (&opt, TASKS, tally_task, t, NULL);
    ck_assert_msg (st == 140, "threads %u: status %d", nt, st);
    for (size_t i = 0; i < TASKS; i++)
      ck_assert_int_le (t->runs[i], 1);
    for (size_t i = 0; i <= 40; i++)
      if (i % nt == 40 % nt)
        ck_assert_msg (t->runs[i] == 1, "threads %u: task %zu before the failure skipped",
                       nt, i);
    if (nt == 1)
      for (size_t i = 41; i < TASKS; i++)
        ck_assert_msg (t->runs[i] == 0, "one thread: task %zu ran after the failure", i);
    free (t);
  }
}
END_TEST

START_TEST (thread_pool_failed_starts)
{
  /* No thread can be started: STARTED says so, and the caller runs every worker's tasks
     itself, each task once and as its own worker, so per-worker state stays per worker. */
  bl_pool_opts opt;
  tally *t = calloc (1, sizeof *t);
  unsigned started = 0;
  ck_assert_ptr_nonnull (t);
  t->fail_from = SIZE_MAX;
  bl_pool_opts_init (&opt);
  opt.threads = 4;
  opt.stack = HUGE_STACK;
  ck_assert_int_eq (bl_pool_run (&opt, TASKS, tally_task, t, &started), 0);
  ck_assert_uint_eq (started, 1);
  for (size_t i = 0; i < TASKS; i++) {
    ck_assert_int_eq (t->runs[i], 1);
    ck_assert_uint_eq (t->worker[i], i % 4);
  }
  /* and a failure among them is still reported: worker 0's tasks 0, 4, 8, 12 run first on
     the one thread, and 12 fails (worker 2's task 10 is never begun) */
  memset (t, 0, sizeof *t);
  t->fail_from = 10;
  ck_assert_int_eq (bl_pool_run (&opt, TASKS, tally_task, t, &started), 112);
  ck_assert_int_eq (t->runs[10], 0);
  ck_assert_int_eq (t->runs[13], 0);
  free (t);
}
END_TEST

static Suite *
thread_suite (void)
{
  Suite *s = suite_create ("thread");
  TCase *basics = tcase_create ("basics");
  TCase *errors = tcase_create ("errors");
  tcase_add_test (basics, thread_start_join);
  tcase_add_test (basics, thread_partner_steps);
  tcase_add_test (basics, thread_slots_order);
  tcase_add_test (basics, thread_slots_stop);
  tcase_add_test (basics, thread_pool_every_task_once);
  tcase_add_test (basics, thread_pool_few_tasks);
  tcase_add_test (errors, thread_start_failure_reported);
  tcase_add_test (errors, thread_partner_failed_start);
  tcase_add_test (errors, thread_pool_error_propagated);
  tcase_add_test (errors, thread_pool_failed_starts);
  suite_add_tcase (s, basics);
  suite_add_tcase (s, errors);
  return s;
}

int
main (void)
{
  return test_run_suite (thread_suite (), 0);
}
