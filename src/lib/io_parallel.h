/* io_parallel.h -- the reader's speculative two-thread parse (internal, not installed; see
   io_parallel.c). */
#ifndef BALLAST_IO_PARALLEL_H
#define BALLAST_IO_PARALLEL_H
#include "io_reader.h"
#include "thread.h"

/* Longest numeric cell the worker converts through strtod (longer: sequential). */
#define SPEC_NUM_MAX 128
/* While fewer rows than this are read, a step whose columns are not all typed first parses a
   slice sequentially (bl_io_par_step). */
#define SPEC_DECIDE_ROWS 4096
/* Parts shorter than this are parsed sequentially: a thread costs more than it saves. */
#define SPEC_MIN ((size_t) 64 << 10)

typedef struct bl_io_spec {
  reader rd;                  /* the worker's reader over the second part */
  size_t first_nl;            /* line feeds of the first part, counted before the worker
                                 starts: the caller parses that part in place (writing NULs
                                 over cell ends for strtod), so the worker must not read it */
  size_t ncols;
  int *type;                  /* column types when the worker started */
  double **num;               /* per column: the table's array (NUM), or NULL */
  size_t *line;               /* the table's line array */
  size_t base, cap;           /* table rows before the step; rows reserved */
  field **raw;                /* per column: located cells (line relative to the split) */
  size_t rows_cap;            /* rows every raw array holds */
  size_t rows;                /* rows the worker may fill in this step (<= rows_cap) */
  size_t off;                 /* the worker's first row: base + line feeds of the first part */
  size_t line0;               /* the split's line, as the first part's line feeds predict
                                 (the worker's lines are absolute from it) */
  size_t nrows, lines;        /* records parsed, lines consumed */
  int ok;                     /* the whole part was taken */
  int all_decided;            /* every type known: the one-pass record form applies */
  /* The worker thread, started at the first parallel step of a read and kept until its end
     (one thread per read, not one per step): each step is one task of the partner
     (thread.h), whose hand-over orders every write to W before the worker reads it, and the
     worker's rows before the merge. */
  bl_partner partner;
} bl_io_spec;

/* Stop the worker thread, if any, free what W holds and zero it (a zeroed W is valid). */
void bl_io_spec_free (bl_io_spec *w);
/* One parallel step over the complete records from ps->pos, when there are enough of
   them (each part at least MIN_PART bytes).  On return ps->pos has moved past them (or
   nothing happened).  Returns BL_OK or an error code with ERR filled. */
int bl_io_par_step (reader *rd, bl_table *t, const bl_table_opts *opt, pstate *ps,
                    bl_io_spec *w, size_t min_part, bl_err *err);

#endif
