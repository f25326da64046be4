/* design_impl.h -- the design's internal types and the functions its files share (internal,
   not installed).  The design is split by layer:
     design_terms.c  terms checked against the table, evaluated (function terms) and
                     expanded into products of factors (the columns of X)
     design_rows.c   the row set: rows dropped for missing cells, counted by reason, and the
                     levels and reference level of each categorical column
     design.c        bl_design_new (the build in its phases), free and accessors
     design_fill.c   X filled by row block (double and long double), and subsets of rows */
#ifndef BALLAST_DESIGN_IMPL_H
#define BALLAST_DESIGN_IMPL_H
#include <stdint.h>
#include <stdio.h>
#include "design.h"

typedef enum factor_kind {
  F_TABLE,                  /* x indexed by table row */
  F_OWNED,                  /* x indexed by used row (a derived vector the design owns) */
  F_IND                     /* 1 when codes[table row] == level, else 0 */
} factor_kind;

typedef struct factor {
  factor_kind kind;
  const double *x;
  const long double *xl;    /* F_OWNED: the same values in long double, or NULL */
  const int32_t *codes;
  int32_t level;
} factor;

typedef struct dcol {
  char *label;
  size_t nf;
  factor *f;                /* nf == 0: the intercept */
} dcol;

typedef struct collist {
  dcol *c;
  size_t n, cap;
} collist;

typedef struct derived {
  char *label;              /* the term label it was evaluated for, for sharing */
  double *x;                /* length n */
  long double *xl;          /* length n, for designs of at most BL_DESIGN_LD_ROWS rows */
} derived;

typedef struct drop {
  char *text;               /* "missing 'age'" */
  size_t count;
} drop;

typedef struct catinfo {    /* a categorical column the terms use (bl_design_cat_*) */
  char *column;
  char **levels;            /* the levels with an indicator column, in column order */
  size_t nlevels;
  char *reference;
} catinfo;

/* Code of a fixed level that the table does not hold: matches no row (not even a missing
   cell, whose code is -1). */
#define ABSENT INT32_MIN

struct bl_design {
  const bl_table *t;
  char *response;
  int intercept;
  size_t nread, n;
  size_t *rows;             /* table row of each used row */
  double *y, *offset, *prior_w, *varcol;
  collist cols;
  derived *der;
  size_t nder, dercap;
  drop *drops;
  size_t ndrops;
  catinfo *cats;
  size_t ncats;
};

/* State used only while building. */
typedef struct build {
  bl_design *d;
  const bl_table *t;
  bl_err *err;
  long *ref_over;           /* per table column: reference level from opt, or -1 */
  unsigned char **lev_used; /* per categorical term column: which levels occur in used rows */
  int32_t *ref;             /* per table column: the reference level chosen */
  const bl_design_opts *opt;
  int32_t **fixcode;        /* per table column with fixed levels: the table code of each
                               fixed level (ABSENT when the table lacks it) */
  const bl_design_levels **fixed;   /* per table column: its fixed levels, or NULL */
} build;

static inline int
oom (build *b)
{
  return bl_fail (b->err, BL_ENOMEM, bl_table_source (b->t), "out of memory building the "
                  "design");
}

/* "FILE:LINE" of table row R, for messages about a row. */
static inline void
row_where (const bl_table *t, size_t r, char *buf, size_t cap)
{
  snprintf (buf, cap, "%s:%zu", bl_table_source (t), bl_table_line (t, r));
}

/* design_terms.c */

/* Check that every column under TERM exists and that no categorical column sits under a
   function (FN, the innermost enclosing function node, or, for the offset, OFFSET set);
   WHERE names the option for messages.  BL_OK or an error code with b->err filled. */
/* Column J (categorical) is used where a number is needed (WHERE, the option; ROLE, what
   needs it, e.g. "the response must be numeric").  A column categorical by its cells is a
   data error (BL_EDATA) naming its first non-number cell; one declared categorical is the
   caller's contradiction (BL_ESPEC at WHERE).  Returns the code. */
int bl_dterm_fail_categorical (build *b, size_t j, const char *where, const char *role);
int bl_dterm_check (build *b, const bl_term *term, const bl_term *fn, int offset,
                    const char *where);
/* The column leaves under T (a bound on what bl_dterm_collect_leaves adds for it). */
size_t bl_dterm_count_leaves (const bl_term *t);
/* Append TERM's column indices, left to right, to COLS (*NC entries; unique). */
void bl_dterm_collect_leaves (const bl_table *t, const bl_term *term, long *cols, size_t *nc);
/* TERM evaluated over the used rows into a new array *OUT.  BL_OK or an error code. */
int bl_dterm_eval_rows (build *b, const bl_term *term, double **out);
/* Append to L a column with LABEL (taken over: freed here on failure) and the NF factors
   at F followed by the NG at G (copied).  BL_OK or BL_ENOMEM. */
int bl_dterm_collist_push (build *b, collist *l, char *label, const factor *f, size_t nf,
                           const factor *g, size_t ng);
/* Free what L holds. */
void bl_dterm_collist_clear (collist *l);
/* Append the columns of TERM to OUT.  BL_OK or an error code with b->err filled. */
int bl_dterm_expand (build *b, const bl_term *term, collist *out);
/* A column with two or more numeric factors is multiplied out in bl_design_fill: check that
   the product of column C is finite in every used row where its indicators are 1. */
int bl_dterm_check_products (build *b, const dcol *c);

/* design_rows.c */

/* Parse the reference entries of OPT into b->ref_over.  BL_OK or BL_ESPEC. */
int bl_drows_parse_references (build *b, const bl_design_opts *opt);
/* Choose the used rows; count the dropped ones by their first missing column in CHECK. */
int bl_drows_select (build *b, const long *check, size_t ncheck);
/* Which levels of each categorical term column (CHECK[NTERM0 .. NTERM1)) occur in the used
   rows, and the reference; or the fixed levels the options give. */
int bl_drows_choose_levels (build *b, const long *check, size_t nterm0, size_t nterm1);

#endif
