/* io_reader.h -- the reader's internal types and the functions its files share (internal,
   not installed).  The reader is split by layer:
     io_intern.c    string sets: column names and categorical levels
     io_scan.h/.c   number scanning (SWAR digits, SSE2 16-byte cells, Clinger's fast path)
     io_record.c    the RFC 4180 record parser and the conversion of cells into columns
     io_parallel.c  the speculative two-thread parse of a chunk
     table.c        typed columns, the read loop over a source, and the public table API
   Each file includes this header; only table.c and io_parallel.c see io_parallel.h. */
#ifndef BALLAST_IO_READER_H
#define BALLAST_IO_READER_H
#include <stddef.h>
#include <stdint.h>
#include "error.h"
#include "io_intern.h"
#include "source.h"
#include "table.h"

/* Bytes asked of the source per read; also the initial buffer size. */
#define READ_CHUNK ((size_t) 1 << 20)
/* Rows allocated at the first data record; capacity doubles after that. */
#define ROWS_INIT ((size_t) 1024)
/* Buffers of READ_CHUNK bytes that a gzip producer thread may inflate ahead. */
#define SOURCE_RING 4
/* Longest excerpt of a bad cell quoted in a message. */
#define CELL_QUOTE_MAX 60

/* Column states while reading.  UNDECIDED: no non-missing cell yet.  NUM: numbers only so
   far.  CAT: labels only so far, or declared categorical (FORCED).  MIX: both numbers and
   labels; decided at the end (table.c, decide_types) by the majority rule.  SKIP: not kept
   (bl_table_opts.keep). */
enum { COL_UNDECIDED, COL_NUM, COL_CAT, COL_SKIP, COL_MIX };
enum { REC_DONE, REC_MORE, REC_ERR };
/* Why a cell of a column is not a number (bad_cell.kind). */
enum { BAD_NOT = 1, BAD_SPECIAL, BAD_OVERFLOW };

/* The first cell of a column that is not a number, kept for the message given when the
   column turns out numeric: its place, why, and its text (at most CELL_QUOTE_MAX bytes). */
typedef struct bad_cell {
  size_t line, col;           /* 0: none */
  int kind;                   /* BAD_* */
  size_t len;                 /* the cell's length (the text may be cut) */
  char text[CELL_QUOTE_MAX + 1];
} bad_cell;

typedef struct column {
  int type;
  int forced;                 /* declared categorical: every cell is a label */
  int texts;                  /* CAT, MIX: every non-missing cell's text is in LEV (false for
                                 a MIX column that began numeric: its first numbers were
                                 stored as doubles only) */
  size_t nbad;                /* non-missing cells that are not numbers (not for FORCED) */
  size_t nnum;                /* MIX at the end: the cells that are numbers */
  bad_cell bad;               /* the first of them */
  size_t over_line, over_col; /* the first cell past max_levels (its level not kept), or 0 */
  double *num;                /* NUM, MIX: cap entries (NAN: missing, or a label in MIX) */
  int32_t *codes;             /* CAT, MIX: cap entries (-1: missing, or no text kept) */
  dict lev;                   /* CAT, MIX: levels (sorted at the end) */
} column;

struct bl_table {
  char *source;
  size_t nrows, ncols, cap;
  dict names;                 /* column names, in column order */
  column *cols;
  size_t *line;               /* cap entries: physical start line of each record */
  int frozen;                 /* a worker writes into the arrays: they must not move */
  size_t ndecided;            /* columns not UNDECIDED (the fast record path needs all) */
  size_t est_rows;            /* rows the whole input probably holds (0: unknown): the next
                                 growth goes straight there instead of doubling */
};

/* One located field of the current record.  S points into the reader's buffer, after an
   opening quote if there was one; N counts raw bytes (before "" is unescaped). */
typedef struct field {
  char *s;
  size_t n;
  size_t line;
  int dquote;                 /* quoted and holds "" pairs */
} field;

typedef struct reader {
  bl_source *src;
  const char *name;
  char *buf;                  /* cap + 1 bytes: one spare for a NUL after the last cell */
  size_t cap, len;
  int eof;
  char delim, mark;           /* field delimiter; decimal mark ('.' or ',') */
  unsigned char stop[256];    /* nonzero for bytes that end an unquoted field */
  field *f;
  size_t fcap, fmax;          /* fields stored: at most fmax (ncols once the header is read) */
  field spare;                /* fields past fmax are parsed into this and only counted */
  size_t max_levels;
  size_t max_record;          /* bl_table_opts.max_record */
  size_t total;               /* bytes read from the source so far */
  size_t size_hint;           /* exact input size when known in advance (plain files), else 0 */
} reader;

/* Where the record loop stands: the next byte to parse, its line, and the empty lines seen
   since the last record (they become one-field records only if another record follows). */
typedef struct pstate {
  size_t pos, line, pending, pending_line;
  int have_header;
} pstate;

static inline int
is_blank (char c)
{
  return c == ' ' || c == '\t';
}

static inline int
is_missing (const char *s, size_t n)
{
  switch (n) {
  case 0: return 1;
  case 1: return s[0] == '.';
  case 2: return s[0] == 'N' && s[1] == 'A';
  case 3: return s[0] == 'N' && s[1] == 'a' && s[2] == 'N';
  default: return 0;
  }
}

/* The end of cell J of NC at *PP: the delimiter (moved past) before the last cell, a line
   end ("\n" or "\r\n", moved past) after it.  0 for anything else, or the buffer's end. */
static inline int
cell_end (const char **pp, const char *end, char delim, size_t j, size_t nc)
{
  const char *p = *pp;
  if (p == end)
    return 0;
  if (j + 1 < nc) {
    if (*p != delim)
      return 0;
    *pp = p + 1;
    return 1;
  }
  if (*p == '\n') {
    *pp = p + 1;
    return 1;
  }
  if (*p == '\r' && p + 1 < end && p[1] == '\n') {
    *pp = p + 2;
    return 1;
  }
  return 0;
}

/* io_record.c */

/* ERR for line LINE, column COL (0: none) of the input: BL_EDATA with MSG.  Returns it. */
int bl_io_fail_at (const reader *rd, bl_err *err, size_t line, size_t col, const char *msg);
/* ERR for an exhausted allocation while reading: BL_ENOMEM.  Returns it. */
int bl_io_fail_nomem (const reader *rd, bl_err *err);
/* Remove the second quote of every "" pair of S (N bytes) in place; returns the new length. */
size_t bl_io_unescape (char *s, size_t n);
/* Locate the fields of the record at *PP.  On REC_DONE, *NF is the field count, *PP points
   past the record and *LINE is the line after it.  REC_MORE: the buffer ends inside the
   record and more input exists (nothing changed).  REC_ERR: ERR is filled. */
int bl_io_parse_record (reader *rd, char **pp, size_t *line, size_t *nf_out, bl_err *err);
/* ERR for column J past max_levels at LINE:COL: BL_EDATA.  Returns it. */
int bl_io_fail_levels (const reader *rd, const bl_table *t, size_t j, size_t line, size_t col,
                       bl_err *err);
/* ERR for the first non-number cell of column J, which the majority rule made numeric (NNUM
   of its non-missing cells are numbers): BL_EDATA naming the cell, with the hint
   --categorical.  Returns it. */
int bl_io_fail_bad (const reader *rd, const bl_table *t, size_t j, size_t nnum, bl_err *err);
/* ERR for strtod stopping early in cell F of column J (not the C locale): BL_EINTERNAL. */
int bl_io_fail_locale (const reader *rd, const field *f, size_t j, bl_err *err);
/* Convert field F (its "" pairs still doubled) into column J at row t->nrows (classified and
   counted; the type is decided at the end). */
int bl_io_put_cell (reader *rd, bl_table *t, size_t j, const field *f, bl_err *err);
/* Parse every complete record in [ps->pos, rd->len) into T.  Returns BL_CONTINUE when the
   buffer ends, BL_OK right after the header was taken when HEADER_ONLY is set, or another
   code with ERR filled. */
int bl_io_parse_avail (reader *rd, bl_table *t, const bl_table_opts *opt, pstate *ps,
                       int header_only, bl_err *err);

/* table.c */

/* Room for at least NEED rows (NEED > t->cap) in every array of T: BL_OK or BL_ENOMEM. */
int bl_io_grow_rows_to (bl_table *t, size_t need);
/* Room for one more row. */
int bl_io_grow_rows (bl_table *t);
/* Give column C of T its type, with the first t->nrows cells missing: BL_OK or BL_ENOMEM. */
int bl_io_decide (bl_table *t, column *c, int type);
/* Take the header record of NF fields: names non-empty, valid UTF-8, unique; set up the
   columns.  BL_OK or an error code with ERR filled. */
int bl_io_take_header (reader *rd, bl_table *t, size_t nf, const bl_table_opts *opt,
                       bl_err *err);

#endif
