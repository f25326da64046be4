/* terms.h -- ballast's own term syntax, parsed into a list of expression trees.

   Grammar (white space is ignored between tokens):
     list  := term ( ',' term )*
     term  := name | 'log' '(' term ')' | 'sqrt' '(' term ')' | 'exp' '(' term ')'
            | 'pow' '(' term ',' number ')' | 'cross' '(' term ',' term ')'
     name  := [A-Za-z_.][A-Za-z0-9_.]*  |  '[' any bytes, with ']]' for a literal ']' ']'
   A bare name that is also a function word (log, sqrt, exp, pow, cross) is a column name
   unless an opening parenthesis follows.  number is a real in C syntax (strtod), finite. */
#ifndef BALLAST_TERMS_H
#define BALLAST_TERMS_H
#include <stddef.h>
#include "error.h"
#ifdef __cplusplus
extern "C" {
#endif

/* Deepest nesting of function calls the parser accepts ("log(log(...))"); deeper input is
   BL_ESPEC.  A bound keeps the recursive-descent parser's stack use fixed on hostile input. */
#define BL_TERMS_MAX_DEPTH 64

typedef enum bl_term_kind {
  BL_TERM_COL,    /* a column; name set */
  BL_TERM_LOG,    /* natural log of a */
  BL_TERM_SQRT,   /* square root of a */
  BL_TERM_EXP,    /* exp of a */
  BL_TERM_POW,    /* a to the power k */
  BL_TERM_CROSS   /* product of a and b (indicator products when categorical) */
} bl_term_kind;

/* One node of a term's expression tree.  Read-only for callers. */
typedef struct bl_term {
  bl_term_kind kind;
  char *name;                 /* BL_TERM_COL: the column name (brackets removed) */
  double k;                   /* BL_TERM_POW: the power */
  struct bl_term *a, *b;      /* arguments (a for unary, a and b for cross) */
  char *label;                /* canonical text, no white space: "log(hours)",
                                 "cross(site,age)", "pow(d,2)", "log([flow rate])" */
} bl_term;

typedef struct bl_terms bl_terms;    /* opaque list; defined in terms.c */

/* Parse TEXT.  WHERE names the option or spec line for messages ("--terms").  A syntax error
   is BL_ESPEC with ERR->where = WHERE and a message that gives the 1-based character position
   and what was expected ("at character 12: expected ')' after 'hours'").  An empty list, an
   empty term, a duplicate term (same canonical label) and a non-finite power are BL_ESPEC.
   Returns NULL on failure. */
BL_API bl_terms *bl_terms_parse (const char *text, const char *where, bl_err *err);

/* Free the list and its trees.  Accepts NULL. */
BL_API void bl_terms_free (bl_terms *terms);

BL_API size_t bl_terms_count (const bl_terms *terms);
/* Term I (0-based); valid until bl_terms_free. */
BL_API const bl_term *bl_terms_get (const bl_terms *terms, size_t i);

/* Write the canonical text of the whole list, terms joined by ", ", into BUF (always
   NUL-terminated).  Returns the length it needed (as snprintf). */
BL_API size_t bl_terms_text (const bl_terms *terms, char *buf, size_t cap);

/* Format a finite double as the shortest decimal that reads back to the same value (as used
   in labels: pow(d,2), pow(d,0.5)).  BUF needs 32 bytes. */
BL_API void bl_format_shortest (double x, char buf[32]);

#ifdef __cplusplus
}
#endif
#endif
