/* io_path.h -- which paths name the same file: the check that no output of a command (or of
   a spec run) replaces one of its inputs, or another of its outputs. */
#ifndef BALLAST_IO_PATH_H
#define BALLAST_IO_PATH_H
#include "error.h"
#include "version.h"
#ifdef __cplusplus
extern "C" {
#endif

/* A set of the paths one command reads and writes, each with a label that names it in
   messages (an option, "DATA", "the data of job 'x' (demo.spec:4)").  Opaque; defined in
   io_path.c. */
typedef struct bl_path_set bl_path_set;

/* Flags of bl_path_set_add. */
enum {
  BL_PATH_INPUT = 0,           /* a file read */
  BL_PATH_OUTPUT = 1u << 0,    /* a file (or folder) written or created */
  BL_PATH_NOFOLLOW = 1u << 1   /* the output replaces the name itself (a rename, never
                                  through a final symbolic link): its identity is the
                                  name's own (lstat), not what a link points to */
};

/* An empty set.  NULL with ERR (BL_ENOMEM).  Free with bl_path_set_free (NULL is fine). */
BL_API bl_path_set *bl_path_set_new (bl_err *err);
BL_API void bl_path_set_free (bl_path_set *s);

/* Add PATH with FLAGS and LABEL (both copied).  "-" is the process's standard input (an
   input) or standard output (an output).  The identity is taken now:
   - a path that exists and is a regular file or a folder: its device and inode number
     (following links unless BL_PATH_NOFOLLOW), so two spellings or a hard link of one file
     are one file;
   - a path that does not exist yet: its resolved name, the real path of its longest
     existing folder (realpath) followed by the rest with "." and empty components dropped;
   - a device, FIFO, socket or terminal (written in place, never replaced), and "-" as an
     input that is not a regular file: no identity, never the same as anything;
   - "-" as an output: standard output's device and inode when it is a regular file, and in
     any case the same as every other "-" output.
   BL_OK, or BL_ESPEC (WHERE = LABEL) for an empty PATH, or BL_ENOMEM. */
BL_API int bl_path_set_add (bl_path_set *s, const char *path, unsigned flags,
                            const char *label, bl_err *err);

/* Whether an output is the same file as an input or as another output.  BL_OK when none
   is; else BL_ESPEC with ERR->where = the output's label and the message naming both
   ("'d.csv' is the same file as DATA; an output must not replace an input"; for two
   outputs "...; two outputs cannot share one file").  When several pairs collide, the one
   reported is that of the output added first, with the input added first (else the other
   output added first). */
BL_API int bl_path_set_check (const bl_path_set *s, bl_err *err);

#ifdef __cplusplus
}
#endif
#endif
