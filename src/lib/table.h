/* table.h -- columnar table read from CSV or TSV (RFC 4180), with typed columns. */
#ifndef BALLAST_TABLE_H
#define BALLAST_TABLE_H
#include <signal.h>
#include <stddef.h>
#include <stdint.h>
#include "error.h"
#ifdef __cplusplus
extern "C" {
#endif

typedef struct bl_table bl_table;     /* opaque; defined in table.c */

/* Default limit on distinct levels of one categorical column (BL_TABLE_MAX_LEVELS). */
#define BL_TABLE_MAX_LEVELS 100000
/* Default limit on the bytes of one record (bl_table_opts.max_record): 1 GiB.  The reader
   holds a whole record in its buffer, which doubles to fit it. */
#define BL_TABLE_MAX_RECORD ((size_t) 1 << 30)
/* Limit on the columns of a file (fields of the header): 1000000. */
#define BL_TABLE_MAX_COLS 1000000
/* Default number of threads that parse (BL_TABLE_THREADS) and default bytes parsed per
   parallel step (BL_TABLE_CHUNK, 4 MiB). */
#define BL_TABLE_THREADS 2
#define BL_TABLE_CHUNK ((size_t) 4 << 20)

typedef struct bl_table_opts {
  char delimiter;             /* 0: ',' or, for a name ending ".tsv" (or ".tsv.gz"), '\t' */
  int decimal_comma;          /* nonzero: numbers are written "3,14" (delimiter must not be ',') */
  const char *const *categorical;  /* column names forced categorical; may be NULL */
  size_t n_categorical;
  size_t max_levels;          /* more distinct levels in one column is BL_EDATA */
  /* 1: parse on the calling thread only.  2 or more: each chunk is split at a line end near
     its middle and the second part is parsed on a second thread (more than 2 is taken as
     2), and gzip data are inflated on a thread of their own.  The table, and any error with
     its where and message, are the same as with 1 for every input.  0 is taken as 1. */
  unsigned threads;
  /* When non-NULL, polled once per chunk: once *CANCEL is nonzero the read fails with
     BL_ECANCEL ("reading was cancelled") and nothing is kept. */
  volatile sig_atomic_t *cancel;
  /* Bytes per parallel step (threads >= 2); 0 for the default.  For gzip input at most
     4 MiB are used, the size of the inflating thread's buffers. */
  size_t chunk;
  /* When non-NULL, only these N_KEEP columns (by name) are kept: the others are read past
     (their cells count for the record's field count and quoting, nothing else: not stored,
     not converted, not checked), so memory follows the columns used, not the file's width.
     bl_table_find does not find a column that was not kept; the header's names are all
     checked as usual.  Names not in the header are ignored here (the caller reports them). */
  const char *const *keep;
  size_t n_keep;
  /* A record (a line, or several when quoted cells hold line breaks) longer than this many
     bytes is BL_EDATA, refused before the buffer grows past it (BL_TABLE_MAX_RECORD). */
  size_t max_record;
} bl_table_opts;

/* Fill OPT with the defaults (delimiter 0, decimal_comma 0, no categorical, max_levels
   BL_TABLE_MAX_LEVELS, threads BL_TABLE_THREADS, cancel NULL, chunk BL_TABLE_CHUNK). */
BL_API void bl_table_opts_init (bl_table_opts *opt);

/* Read a whole table from PATH ("-" for standard input; gzip detected by magic bytes).
   OPT may be NULL for the defaults.  The first record is the header: column names must be
   non-empty, valid UTF-8 and unique, else BL_EDATA.  Missing cells are empty, "NA", "NaN"
   or "." (after removing surrounding quotes).

   Column types, by a rule over all of a column's cells, never by their order: a column is
   numeric when more than half of its non-missing cells are numbers (strtod-exact decimal,
   optional sign and exponent; with decimal_comma, ',' is the decimal mark), and then every
   other cell of it is BL_EDATA with ERR->where = "FILE:LINE:COL" (1-based physical line of
   the cell and 1-based field number; the earliest such cell of the file is named) and the
   hint "--categorical COL" for a column meant as labels.  Otherwise, or when OPT declares it,
   the column is categorical, every non-missing cell a level (numbers too, as written).  A
   column with no non-missing cell is numeric and all missing.  "inf", "nan"-like words other
   than the missing markers, hex floats, and values that overflow a double are not numbers
   (an underflow to a subnormal or zero is accepted, as strtod gives).  The types are known
   only after the last row; a column that turns out categorical after its first numbers were
   stored as doubles is read a second time for its texts (a pipe from a copy the source keeps
   in a temporary file).  A record with
   more or fewer fields than the header is BL_EDATA naming its line.  A quote never closed is
   BL_EDATA naming the line where the field began.  A file with no header is BL_EDATA.

   Returns NULL and fills ERR on failure (nothing is kept). */
BL_API bl_table *bl_table_read (const char *path, const bl_table_opts *opt, bl_err *err);

/* The same from LEN bytes at BUF; NAME is used in messages (as the file name). */
BL_API bl_table *bl_table_read_mem (const void *buf, size_t len, const char *name,
                                    const bl_table_opts *opt, bl_err *err);

/* Free the table and everything it owns.  Accepts NULL. */
BL_API void bl_table_free (bl_table *t);

/* Accessors.  Pointers returned stay valid until bl_table_free; the caller must not modify
   or free them. */
BL_API const char *bl_table_source (const bl_table *t);   /* the name used in messages */
BL_API size_t bl_table_nrows (const bl_table *t);         /* data records (header excluded) */
BL_API size_t bl_table_ncols (const bl_table *t);
BL_API const char *bl_table_colname (const bl_table *t, size_t j);
/* Index of the column named NAME (exact byte match), or -1. */
BL_API long bl_table_find (const bl_table *t, const char *name);
BL_API int bl_table_is_numeric (const bl_table *t, size_t j);
/* Numeric column J (length nrows): NAN marks a missing cell.  NULL for a categorical column. */
BL_API const double *bl_table_num (const bl_table *t, size_t j);
/* Categorical column J: level codes 0..nlevels-1 (levels sorted in byte order, as strcmp),
   -1 for a missing cell.  NULL for a numeric column. */
BL_API const int32_t *bl_table_codes (const bl_table *t, size_t j);
BL_API size_t bl_table_nlevels (const bl_table *t, size_t j);
BL_API const char *bl_table_level (const bl_table *t, size_t j, size_t k);
/* Nonzero when column J is categorical by its cells (the majority rule), not declared so:
   then *NLABELS of its non-missing cells are not numbers and *NNUM are, and the first that is
   not stands at *LINE (1-based physical line) and field *COL (1-based), its text in *TEXT
   (at most 60 bytes; valid until bl_table_free).  0, with nothing set, for a numeric column
   or one declared categorical.  For messages that name the cell that made a column
   categorical where a number is needed. */
BL_API int bl_table_typed_by_cells (const bl_table *t, size_t j, size_t *nlabels,
                                    size_t *nnum, size_t *line, size_t *col,
                                    const char **text);
/* The 1-based physical line on which data record ROW (0-based) starts, for messages. */
BL_API size_t bl_table_line (const bl_table *t, size_t row);

#ifdef __cplusplus
}
#endif
#endif
