/* thread.c -- helper threads with a bounded stack (see thread.h). */
#include "config.h"
#include "thread.h"

int
bl_thread_start (pthread_t *tid, void *(*fn) (void *), void *arg)
{
  pthread_attr_t attr;
  int rc;
  if (pthread_attr_init (&attr) != 0)
    return pthread_create (tid, NULL, fn, arg);
  if (pthread_attr_setstacksize (&attr, BL_THREAD_STACK) != 0) {
    pthread_attr_destroy (&attr);
    return pthread_create (tid, NULL, fn, arg);
  }
  rc = pthread_create (tid, &attr, fn, arg);
  pthread_attr_destroy (&attr);
  return rc;
}
