/* spec.c -- the batch spec file: lines, sections, job names, and each job's checks (see
   spec.h and doc/spec-format.md).

   The text is read whole and checked line by line in one pass.  A job is built in place in
   the job array: it starts as a copy of [defaults], its keys are applied through bl_job_set
   (so a value means the same, and is refused with the same message, as on the command
   line), and when its section ends it is checked as a whole.  The first error stops the
   pass; everything built so far is freed and the caller gets NULL, so no job of a broken
   spec ever runs. */
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include "alloc.h"
#include "options.h"
#include "source.h"
#include "job.h"

struct bl_spec {
  char *stem;
  bl_spec_job *jobs;
  size_t njobs, cap;
};

/* Every known key is shorter than this (the longest is "decimal-comma"; check_options.c
   checks the table against it). */
#define KEY_MAX 24
/* More than the number of keys in the option table; a section repeats none of them. */
#define SECTION_KEYS_MAX BL_OPTION_MAX

/* The keys one section has set, with their lines (for "given twice"). */
typedef struct seen_keys {
  char key[SECTION_KEYS_MAX][KEY_MAX];
  size_t line[SECTION_KEYS_MAX];
  size_t n;
} seen_keys;

/* Where a section set terms and offset (0: not in this section). */
typedef struct term_lines {
  size_t terms, offset, against;
} term_lines;

typedef struct parser {
  const char *name;              /* the spec's name in messages */
  const char *dir;               /* folder for relative data paths; "" keeps them */
  bl_spec *s;
  bl_job defaults;
  term_lines def_lines;
  int have_defaults;
  size_t defaults_line;
  int section;                   /* 0 none, 1 defaults, 2 job */
  int building;                  /* s->jobs[s->njobs] holds a job being built */
  term_lines job_lines;
  seen_keys seen;
  uint64_t *hash;                /* FNV-1a of each finished job's name in lower case */
  size_t nlines;
  bl_err err;
} parser;

static int
is_blank (char c)
{
  return c == ' ' || c == '\t';
}

static char
ascii_lower (char c)
{
  return c >= 'A' && c <= 'Z' ? (char) (c - 'A' + 'a') : c;
}

static int
ascii_caseeq (const char *a, const char *b)
{
  for (; *a && *b; a++, b++)
    if (ascii_lower (*a) != ascii_lower (*b))
      return 0;
  return *a == *b;
}

/* FNV-1a, 64 bits (Fowler, Noll & Vo; the published offset basis and prime), over the name
   in ASCII lower case: equal hashes are only candidates for a case clash, compared in full. */
static uint64_t
name_hash (const char *s)
{
  uint64_t h = 14695981039346656037ULL;
  for (; *s; s++) {
    h ^= (unsigned char) ascii_lower (*s);
    h *= 1099511628211ULL;
  }
  return h;
}

/* Why NAME is not a valid job name, written into WHY; 0 when it is valid. */
static int
name_problem (const char *name, char *why, size_t cap)
{
  const size_t len = strlen (name);
  if (len == 0) {
    snprintf (why, cap, "the job name is empty");
    return 1;
  }
  if (len > BL_SPEC_NAME_MAX) {
    snprintf (why, cap, "job name is %zu bytes long (at most %d)", len, BL_SPEC_NAME_MAX);
    return 1;
  }
  if (name[0] == '.' || name[0] == '-') {
    snprintf (why, cap, "job name '%s' starts with '%c'", name, name[0]);
    return 1;
  }
  for (size_t i = 0; i < len; i++) {
    const unsigned char c = (unsigned char) name[i];
    if ((c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9')
        || c == '-' || c == '_' || c == '.')
      continue;
    if (c >= ' ' && c < 0x7f)
      snprintf (why, cap, "job name '%s' has the character '%c' (use letters, digits, '-', "
                "'_' and '.')", name, c);
    else
      snprintf (why, cap, "job name '%s' has the byte 0x%02x (use letters, digits, '-', "
                "'_' and '.')", name, c);
    return 1;
  }
  {
    /* the report's own names, with any extension (summary.csv, index.html, Summary.JSON) */
    char stem[BL_SPEC_NAME_MAX + 1];
    const char *dot = strchr (name, '.');
    const size_t sl = dot ? (size_t) (dot - name) : len;
    memcpy (stem, name, sl);
    stem[sl] = '\0';
    if (ascii_caseeq (stem, "summary") || ascii_caseeq (stem, "index")) {
      snprintf (why, cap, "job name '%s' is reserved for the batch report", name);
      return 1;
    }
  }
  return 0;
}

int
bl_spec_name_ok (const char *name)
{
  char why[256];
  return name != NULL && name_problem (name, why, sizeof why) == 0;
}

static int fail (parser *p, size_t line, const char *fmt, ...)
#if defined(__GNUC__)
  __attribute__ ((format (printf, 3, 4)))
#endif
  ;

/* BL_ESPEC at NAME:LINE. */
static int
fail (parser *p, size_t line, const char *fmt, ...)
{
  char where[sizeof p->err.where], msg[sizeof p->err.msg];
  va_list ap;
  va_start (ap, fmt);
  vsnprintf (msg, sizeof msg, fmt, ap);
  va_end (ap);
  snprintf (where, sizeof where, "%s:%zu", p->name, line);
  return bl_fail (&p->err, BL_ESPEC, where, "%s", msg);
}

static int
nomem (parser *p)
{
  return bl_fail (&p->err, BL_ENOMEM, p->name, "out of memory");
}

static void
where_of (const parser *p, size_t line, char *buf, size_t cap)
{
  snprintf (buf, cap, "%s:%zu", p->name, line);
}

/* Column (1-based) of the first byte of LINE[0..LEN) that does not start a well-formed UTF-8
   sequence, or 0.
   Well-formed as in the Unicode Standard, table 3-7 (no overlong forms, no surrogates,
   nothing above U+10FFFF). */
static size_t
utf8_bad (const unsigned char *s, size_t len)
{
  size_t i = 0;
  while (i < len) {
    const unsigned char c = s[i];
    size_t need;
    unsigned char lo = 0x80, hi = 0xbf;
    if (c < 0x80) {
      i++;
      continue;
    }
    if (c >= 0xc2 && c <= 0xdf)
      need = 1;
    else if (c >= 0xe0 && c <= 0xef) {
      need = 2;
      if (c == 0xe0)
        lo = 0xa0;
      else if (c == 0xed)
        hi = 0x9f;
    } else if (c >= 0xf0 && c <= 0xf4) {
      need = 3;
      if (c == 0xf0)
        lo = 0x90;
      else if (c == 0xf4)
        hi = 0x8f;
    } else
      return i + 1;
    if (need > len - i - 1)
      return i + 1;              /* cut short by the end of the line */
    for (size_t k = 1; k <= need; k++) {
      const unsigned char b = s[i + k];
      if (b < lo || b > hi)
        return i + 1;            /* the sequence that starts here is malformed */
      lo = 0x80;
      hi = 0xbf;
    }
    i += need + 1;
  }
  return 0;
}

/* Check the job being built (s->jobs[s->njobs]) as a whole, then count it. */
static int
check_job (parser *p)
{
  bl_spec *const s = p->s;
  bl_spec_job *const sj = &s->jobs[s->njobs];
  bl_job *const j = &sj->job;
  char where[sizeof p->err.where];
  bl_terms *terms, *offset;
  const size_t tl = p->job_lines.terms ? p->job_lines.terms : p->def_lines.terms;
  const size_t ol = p->job_lines.offset ? p->job_lines.offset : p->def_lines.offset;
  const size_t al = p->job_lines.against ? p->job_lines.against : p->def_lines.against;

  if (!j->data)
    return fail (p, sj->line, "job '%s' has no data", sj->name);
  if (!j->response)
    return fail (p, sj->line, "job '%s' has no response", sj->name);
  /* A job with candidates and single-model keys is refused, so it is finished as a
     comparison then (single = 0), which is the case bl_job_finish checks. */
  sj->single = j->model_keys != 0;
  /* The smaller model's syntax names its own line (bl_job_finish then checks that it is
     nested in the terms, naming the job's line, as for any other combination). */
  if (j->against) {
    bl_terms *small;
    where_of (p, al, where, sizeof where);
    if (!(small = bl_terms_parse (j->against, where, &p->err)))
      return p->err.code;
    bl_terms_free (small);
  }
  where_of (p, sj->line, where, sizeof where);
  if (bl_job_finish (j, sj->single && !j->candidates, where, &p->err) != BL_OK)
    return p->err.code;
  /* Terms and offset are parsed one at a time, each with the line that set it. */
  {
    bl_job only = *j;        /* shallow: the strings stay owned by J */
    only.offset = NULL;
    where_of (p, tl, where, sizeof where);
    if (bl_job_parse_terms (&only, where, &terms, &offset, &p->err) != BL_OK)
      return p->err.code;
    bl_terms_free (terms);
    only = *j;
    only.terms = NULL;
    where_of (p, ol, where, sizeof where);
    if (bl_job_parse_terms (&only, where, &terms, &offset, &p->err) != BL_OK)
      return p->err.code;
    bl_terms_free (offset);
  }
  /* Relative data paths resolve against the spec's folder. */
  if (j->data[0] != '/' && p->dir[0] != '\0') {
    const size_t ld = strlen (p->dir), lp = strlen (j->data);
    const int slash = p->dir[ld - 1] != '/';
    char *path = bl_malloc (ld + (size_t) slash + lp + 1);
    if (!path)
      return nomem (p);
    memcpy (path, p->dir, ld);
    if (slash)
      path[ld] = '/';
    memcpy (path + ld + (size_t) slash, j->data, lp + 1);
    bl_free (j->data);
    j->data = path;
  }
  p->hash[s->njobs] = name_hash (sj->name);
  s->njobs++;
  p->building = 0;
  return BL_OK;
}

/* Finish the section being read, if it is a job. */
static int
end_job (parser *p)
{
  return p->building ? check_job (p) : BL_OK;
}

/* LINE[0..LEN) is a section header "[...]" (trimmed, starts with '['). */
static int
header (parser *p, char *line, size_t len, size_t lineno)
{
  bl_spec *const s = p->s;
  char *close = memchr (line, ']', len), *in, *e, *rest;
  char why[BL_SPEC_NAME_MAX * 4 + 128];
  if (!close)
    return fail (p, lineno, "expected ']' at the end of the section header");
  for (rest = close + 1; is_blank (*rest); rest++)
    ;
  if (*rest != '\0' && !(*rest == '#' && rest > close + 1))
    return fail (p, lineno, "unexpected text after the section header: '%s'", rest);
  *close = '\0';
  for (in = line + 1; is_blank (*in); in++)
    ;
  for (e = close; e > in && is_blank (e[-1]); e--)
    ;
  *e = '\0';
  if (end_job (p) != BL_OK)
    return p->err.code;
  p->seen.n = 0;
  if (strcmp (in, "defaults") == 0) {
    if (p->have_defaults)
      return fail (p, lineno, "[defaults] given twice (first at line %zu)", p->defaults_line);
    if (s->njobs > 0)
      return fail (p, lineno, "[defaults] must come before the first job (line %zu)",
                   s->jobs[0].line);
    p->have_defaults = 1;
    p->defaults_line = lineno;
    p->section = 1;
    return BL_OK;
  }
  if (strncmp (in, "job", 3) != 0 || (in[3] != '\0' && !is_blank (in[3])))
    return fail (p, lineno, "unknown section '[%s]' (expected [defaults] or [job NAME])", in);
  for (in += 3; is_blank (*in); in++)
    ;
  if (*in == '\0')
    return fail (p, lineno, "[job] needs a name: [job NAME]");
  if (name_problem (in, why, sizeof why))
    return fail (p, lineno, "%s", why);
  {
    const uint64_t h = name_hash (in);
    for (size_t i = 0; i < s->njobs; i++)
      if (p->hash[i] == h && ascii_caseeq (s->jobs[i].name, in)) {
        if (strcmp (s->jobs[i].name, in) == 0)
          return fail (p, lineno, "job '%s' given twice (first at line %zu)", in,
                       s->jobs[i].line);
        return fail (p, lineno, "job '%s' differs from job '%s' (line %zu) only in case",
                     in, s->jobs[i].name, s->jobs[i].line);
      }
  }
  if (s->njobs >= BL_SPEC_MAX_JOBS)
    return fail (p, lineno, "more than %d jobs", BL_SPEC_MAX_JOBS);
  if (s->njobs == s->cap) {
    const size_t cap = s->cap ? 2 * s->cap : 8;
    bl_spec_job *jobs = bl_realloc (s->jobs, cap * sizeof *jobs);
    uint64_t *hash;
    if (!jobs)
      return nomem (p);
    s->jobs = jobs;
    if (!(hash = bl_realloc (p->hash, cap * sizeof *hash)))
      return nomem (p);
    p->hash = hash;
    s->cap = cap;
  }
  {
    bl_spec_job *const sj = &s->jobs[s->njobs];
    memset (sj, 0, sizeof *sj);
    bl_job_init (&sj->job);
    p->building = 1;     /* from here the slot is cleared on failure */
    memcpy (sj->name, in, strlen (in) + 1);
    sj->line = lineno;
    if (bl_job_copy (&sj->job, &p->defaults, &p->err) != BL_OK)
      return nomem (p);
  }
  p->job_lines.terms = p->job_lines.offset = p->job_lines.against = 0;
  p->section = 2;
  return BL_OK;
}

/* LINE is "key = value" (trimmed, not a header or comment). */
static int
key_line (parser *p, char *line, size_t lineno)
{
  char *eq = strchr (line, '='), *k, *v, *e;
  char where[sizeof p->err.where];
  bl_job *j;
  if (!eq)
    return fail (p, lineno, "expected 'key = value', a section header or a comment, got '%s'",
                 line);
  for (e = eq; e > line && is_blank (e[-1]); e--)
    ;
  *e = '\0';
  k = line;
  if (*k == '\0')
    return fail (p, lineno, "expected a key before '='");
  if (p->section == 0)
    return fail (p, lineno, "key '%s' outside any section (put it under [defaults] or "
                 "[job NAME])", k);
  if (!bl_job_has_key (k)) {
    char low[KEY_MAX];
    size_t i;
    for (i = 0; k[i] && i + 1 < sizeof low; i++)
      low[i] = ascii_lower (k[i]);
    low[i] = '\0';
    if (k[i] == '\0' && bl_job_has_key (low))
      return fail (p, lineno, "unknown key '%s' (keys are lower case: '%s')", k, low);
    return fail (p, lineno, "unknown key '%s'", k);
  }
  for (size_t i = 0; i < p->seen.n; i++)
    if (strcmp (p->seen.key[i], k) == 0)
      return fail (p, lineno, "key '%s' given twice in this section (first at line %zu)", k,
                   p->seen.line[i]);
  if (p->seen.n >= SECTION_KEYS_MAX || strlen (k) >= KEY_MAX)
    return bl_fail (&p->err, BL_EINTERNAL, p->name, "more keys than spec.c expects");
  memcpy (p->seen.key[p->seen.n], k, strlen (k) + 1);
  p->seen.line[p->seen.n++] = lineno;

  /* The value: quoted (taken as it is, '#' included) or bare (a '#' at its start or after
     white space begins a comment). */
  for (v = eq + 1; is_blank (*v); v++)
    ;
  if (*v == '"') {
    char *q = strchr (v + 1, '"'), *r;
    if (!q)
      return fail (p, lineno, "value of '%s' has no closing '\"'", k);
    for (r = q + 1; is_blank (*r); r++)
      ;
    if (*r != '\0' && !(*r == '#' && r > q + 1))
      return fail (p, lineno, "unexpected text after the closing '\"' of '%s': '%s'", k, r);
    *q = '\0';
    v++;
  } else {
    for (e = v; *e; e++)
      if (*e == '#' && (e == v || is_blank (e[-1]))) {
        *e = '\0';
        break;
      }
    for (e = v + strlen (v); e > v && is_blank (e[-1]); e--)
      ;
    *e = '\0';
  }

  j = p->section == 1 ? &p->defaults : &p->s->jobs[p->s->njobs].job;
  where_of (p, lineno, where, sizeof where);
  if (bl_job_set (j, k, v, where, &p->err) != BL_OK)
    return p->err.code;
  {
    term_lines *const tl = p->section == 1 ? &p->def_lines : &p->job_lines;
    if (strcmp (k, "terms") == 0)
      tl->terms = lineno;
    else if (strcmp (k, "offset") == 0)
      tl->offset = lineno;
    else if (strcmp (k, "against") == 0)
      tl->against = lineno;
  }
  return BL_OK;
}

/* One physical line LINE[0..LEN), without its line end; LINE[LEN] may be written. */
static int
one_line (parser *p, char *line, size_t len, size_t lineno)
{
  size_t bad;
  char *b, *e;
  if ((bad = utf8_bad ((const unsigned char *) line, len)) != 0)
    return fail (p, lineno, "not valid UTF-8: byte 0x%02x at column %zu",
                 (unsigned char) line[bad - 1], bad);
  for (size_t i = 0; i < len; i++) {
    const unsigned char c = (unsigned char) line[i];
    if ((c < ' ' && c != '\t') || c == 0x7f)
      return fail (p, lineno, "control character 0x%02x at column %zu", c, i + 1);
  }
  line[len] = '\0';
  for (b = line; is_blank (*b); b++)
    ;
  for (e = line + len; e > b && is_blank (e[-1]); e--)
    ;
  *e = '\0';
  if (*b == '\0' || *b == '#')
    return BL_OK;
  if (*b == '[')
    return header (p, b, (size_t) (e - b), lineno);
  return key_line (p, b, lineno);
}

/* The file name without folder and without its last extension (a leading '.' is part of
   the name, not an extension). */
static char *
make_stem (const char *name)
{
  const char *base = strrchr (name, '/'), *dot;
  size_t len;
  char *s;
  base = base ? base + 1 : name;
  dot = strrchr (base, '.');
  len = dot && dot > base ? (size_t) (dot - base) : strlen (base);
  if (!(s = bl_malloc (len + 1)))
    return NULL;
  memcpy (s, base, len);
  s[len] = '\0';
  return s;
}

void
bl_spec_free (bl_spec *s)
{
  if (!s)
    return;
  for (size_t i = 0; i < s->njobs; i++)
    bl_job_clear (&s->jobs[i].job);
  bl_free (s->jobs);
  bl_free (s->stem);
  bl_free (s);
}

bl_spec *
bl_spec_read_mem (const char *text, size_t len, const char *name, const char *dir,
                  bl_err *err)
{
  parser p;
  char *buf = NULL;
  size_t pos = 0, lineno = 0;
  int st = BL_OK;

  memset (&p, 0, sizeof p);
  p.name = name ? name : "spec";
  p.dir = dir ? dir : "";
  bl_job_init (&p.defaults);
  if (!text && len > 0) {
    bl_fail (err, BL_ESPEC, p.name, "no text");
    return NULL;
  }
  /* One line at a time goes through a private buffer, so TEXT stays const. */
  if (!(p.s = bl_calloc (1, sizeof *p.s)) || !(p.s->stem = make_stem (p.name))
      || !(buf = bl_malloc (BL_SPEC_MAX_LINE + 2))) {
    st = nomem (&p);
    goto done;
  }
  if (len >= 3 && memcmp (text, "\xef\xbb\xbf", 3) == 0)
    pos = 3;                       /* a UTF-8 byte order mark */
  while (st == BL_OK && pos < len) {
    const char *nl = memchr (text + pos, '\n', len - pos);
    size_t n = nl ? (size_t) (nl - (text + pos)) : len - pos;
    const size_t next = pos + n + (nl ? 1 : 0);
    lineno++;
    if (n > 0 && text[pos + n - 1] == '\r')
      n--;                         /* CRLF */
    if (n > BL_SPEC_MAX_LINE)
      st = fail (&p, lineno, "line is %zu bytes long (at most %d)", n, BL_SPEC_MAX_LINE);
    else {
      memcpy (buf, text + pos, n);
      st = one_line (&p, buf, n, lineno);
    }
    pos = next;
  }
  if (st == BL_OK)
    st = end_job (&p);
  if (st == BL_OK && p.s->njobs == 0)
    st = fail (&p, lineno ? lineno : 1, "no [job NAME] section");
done:
  if (p.building) {
    bl_job_clear (&p.s->jobs[p.s->njobs].job);
    p.building = 0;
  }
  bl_job_clear (&p.defaults);
  bl_free (p.hash);
  bl_free (buf);
  if (st != BL_OK) {
    bl_spec_free (p.s);
    if (err)
      *err = p.err;
    return NULL;
  }
  return p.s;
}

/* Read the whole of PATH through bl_source (so its messages are those of every input). */
static char *
read_all (const char *path, size_t *len, bl_err *err)
{
  bl_source *src = bl_source_open (path, err);
  size_t n = 0, cap = 0;
  char *buf = NULL;
  int ok = 0;
  if (!src)
    return NULL;
  for (;;) {
    size_t got;
    int status;
    if (n > BL_SPEC_MAX_BYTES) {
      bl_fail (err, BL_ESPEC, path, "the spec file is larger than %zu MiB (the limit)",
               BL_SPEC_MAX_BYTES >> 20);
      goto done;
    }
    if (cap - n < 4096) {
      const size_t ncap = cap ? 2 * cap : 65536;
      char *b = ncap > cap ? bl_realloc (buf, ncap) : NULL;
      if (!b) {
        bl_fail (err, BL_ENOMEM, path, "out of memory");
        goto done;
      }
      buf = b;
      cap = ncap;
    }
    got = bl_source_read (src, buf + n, cap - n, &status, err);
    if (status != BL_OK)
      goto done;
    if (got == 0)
      break;
    n += got;
  }
  *len = n;
  ok = 1;
done:
  bl_source_free (src);
  if (!ok) {
    bl_free (buf);
    buf = NULL;
  }
  return buf;
}

bl_spec *
bl_spec_read (const char *path, bl_err *err)
{
  const char *slash;
  char *text = NULL, *dir = NULL;
  size_t len = 0, dl;
  bl_spec *s = NULL;
  if (!path) {
    bl_fail (err, BL_EIO, "spec", "no file name");
    return NULL;
  }
  if (!(text = read_all (path, &len, err)))
    goto done;
  /* The folder of PATH: "" when PATH has none (relative data paths are then already
     relative to it), "/" for a file at the root. */
  slash = strrchr (path, '/');
  dl = slash ? (slash == path ? 1 : (size_t) (slash - path)) : 0;
  if (!(dir = bl_malloc (dl + 1))) {
    bl_fail (err, BL_ENOMEM, path, "out of memory");
    goto done;
  }
  memcpy (dir, path, dl);
  dir[dl] = '\0';
  s = bl_spec_read_mem (text, len, path, dir, err);
done:
  bl_free (dir);
  bl_free (text);
  return s;
}

size_t
bl_spec_njobs (const bl_spec *s)
{
  return s ? s->njobs : 0;
}

const bl_spec_job *
bl_spec_get (const bl_spec *s, size_t i)
{
  return s && i < s->njobs ? &s->jobs[i] : NULL;
}

const char *
bl_spec_stem (const bl_spec *s)
{
  return s ? s->stem : NULL;
}
