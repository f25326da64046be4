/* error.h -- status codes, the caller-owned error record, and bl_fail. */
#ifndef BALLAST_ERROR_H
#define BALLAST_ERROR_H
#include <stddef.h>
#include "version.h"
#ifdef __cplusplus
extern "C" {
#endif

/* Status codes.  Every fallible function returns one of these (constructors return NULL and
   fill the error record instead). */
enum {
  BL_OK = 0,
  BL_CONTINUE = -1,   /* iteration not finished: a state, not an error */
  BL_ENOMEM = 1,      /* allocation failed */
  BL_EIO,             /* a file could not be read or written */
  BL_EDATA,           /* bad cell, domain error, or y outside the family's support */
  BL_ESPEC,           /* bad term, option value or spec-file entry (a usage error) */
  BL_ENOCONV,         /* iteration limit reached, or the fit diverged */
  BL_ECANCEL,         /* the caller's cancel flag was set */
  BL_EINTERNAL        /* an invariant failed: a bug in ballast */
};

/* The error record.  WHERE names the place ("pumps.csv:214:3", "--terms", "irls"); MSG says
   what is wrong, in lower case with no full stop.  Both are always NUL-terminated. */
typedef struct bl_err {
  int code;
  char where[1024];
  char msg[512];
} bl_err;

/* Fill ERR (which may be NULL) with CODE, WHERE (may be NULL) and the printf-style message,
   and return CODE, so that failing is one statement.  A breakpoint here stops at every error. */
BL_API int bl_fail (bl_err *err, int code, const char *where, const char *fmt, ...)
#if defined(__GNUC__)
         __attribute__ ((format (printf, 4, 5)))
#endif
         ;

/* Reset ERR to BL_OK with empty strings.  Accepts NULL. */
BL_API void bl_err_clear (bl_err *err);

/* A short static description of a status code ("out of memory", ...). */
BL_API const char *bl_strerror (int code);

/* A growable list of warnings, owned by whatever result holds it.  Messages are copied. */
typedef struct bl_warnings {
  char **msg;
  size_t n, cap;
} bl_warnings;

/* Append a printf-style warning.  Returns BL_OK or BL_ENOMEM (the list is unchanged then). */
BL_API int bl_warnings_add (bl_warnings *w, const char *fmt, ...)
#if defined(__GNUC__)
         __attribute__ ((format (printf, 2, 3)))
#endif
         ;
/* Free every message; leaves an empty list.  Accepts NULL. */
BL_API void bl_warnings_clear (bl_warnings *w);

/* The N names joined by SEP into BUF (LEN bytes, always terminated when LEN > 0, cut short
   when too small), for the lists of accepted values in messages.  Returns the length the
   whole list needs, without the terminator, as snprintf does. */
BL_API size_t bl_join_names (char *buf, size_t len, const char *sep, const char *const *names,
                             size_t n);

#ifdef __cplusplus
}
#endif
#endif
