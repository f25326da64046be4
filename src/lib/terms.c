/* terms.c -- ballast's term syntax: the parser, canonical labels, and the list object.

   The parser is a recursive descent over the grammar in terms.h.  Positions in messages are
   1-based byte offsets into the text, so that a message points at the character a user sees in
   a plain ASCII option string.  Every node carries its canonical label (the term's text with
   white space removed, names bracketed only when they are not plain identifiers), built bottom
   up, so that duplicate detection and design column labels both come from one place. */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "alloc.h"
#include "terms.h"

struct bl_terms {
  size_t n;
  bl_term **t;
};

/* Parser state: the text, the cursor, the WHERE for messages, and the error record. */
typedef struct parser {
  const char *s;
  size_t pos;              /* 0-based byte offset of the cursor */
  const char *where;
  bl_err *err;
  int status;              /* BL_OK until the first failure */
} parser;

static const struct {
  const char *word;
  bl_term_kind kind;
} functions[] = {
  { "log", BL_TERM_LOG }, { "sqrt", BL_TERM_SQRT }, { "exp", BL_TERM_EXP },
  { "pow", BL_TERM_POW }, { "cross", BL_TERM_CROSS }
};

void
bl_format_shortest (double x, char buf[32])
{
  /* The fewest significant digits P (1..17) whose %.{P-1}e form strtod reads back exactly; 17
     always round-trip an IEEE double (IEEE 754-2008, clause 5.12.2).  The digits are then
     written in fixed notation when the decimal exponent E is in [-4, 16), else in exponent
     notation: the layout of Python's float repr, so 100 is "100" and 1e22 is "1e+22". */
  int prec = 1, e;
  char *mark;
  for (; prec < 17; prec++) {
    snprintf (buf, 32, "%.*e", prec - 1, x);
    if (strtod (buf, NULL) == x)
      break;
  }
  snprintf (buf, 32, "%.*e", prec - 1, x);
  mark = strchr (buf, 'e');
  e = mark ? atoi (mark + 1) : 0;
  if (e >= -4 && e < 16)
    snprintf (buf, 32, "%.*f", prec - 1 - e > 0 ? prec - 1 - e : 0, x);
}

static void
term_free (bl_term *t)
{
  if (!t)
    return;
  term_free (t->a);
  term_free (t->b);
  bl_free (t->name);
  bl_free (t->label);
  bl_free (t);
}

void
bl_terms_free (bl_terms *terms)
{
  if (!terms)
    return;
  for (size_t i = 0; i < terms->n; i++)
    term_free (terms->t[i]);
  bl_free (terms->t);
  bl_free (terms);
}

size_t
bl_terms_count (const bl_terms *terms)
{
  return terms ? terms->n : 0;
}

const bl_term *
bl_terms_get (const bl_terms *terms, size_t i)
{
  return (terms && i < terms->n) ? terms->t[i] : NULL;
}

size_t
bl_terms_text (const bl_terms *terms, char *buf, size_t cap)
{
  size_t len = 0;
  if (cap)
    buf[0] = '\0';
  for (size_t i = 0; terms && i < terms->n; i++) {
    const char *parts[2] = { i ? ", " : "", terms->t[i]->label };
    for (size_t k = 0; k < 2; k++) {
      const size_t m = strlen (parts[k]);
      if (len < cap) {
        const size_t room = cap - 1 - len;
        memcpy (buf + len, parts[k], m < room ? m : room);
        buf[len + (m < room ? m : room)] = '\0';
      }
      len += m;
    }
  }
  return len;
}

static int
is_ident_start (int c)
{
  return (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || c == '_' || c == '.';
}

static int
is_ident_char (int c)
{
  return is_ident_start (c) || (c >= '0' && c <= '9');
}

/* Nonzero when NAME is a plain identifier [A-Za-z_.][A-Za-z0-9_.]* and so needs no brackets. */
static int
is_plain (const char *name)
{
  if (!is_ident_start ((unsigned char) name[0]))
    return 0;
  for (const char *p = name + 1; *p; p++)
    if (!is_ident_char ((unsigned char) *p))
      return 0;
  return 1;
}

/* The label of a column name: the name itself, or "[name]" with each ']' doubled. */
static char *
name_label (const char *name)
{
  size_t len = 3, k = 0;
  char *out;
  if (is_plain (name))
    return bl_strdup (name);
  for (const char *p = name; *p; p++)
    len += (*p == ']') ? 2 : 1;
  out = bl_malloc (len);
  if (!out)
    return NULL;
  out[k++] = '[';
  for (const char *p = name; *p; p++) {
    out[k++] = *p;
    if (*p == ']')
      out[k++] = ']';
  }
  out[k++] = ']';
  out[k] = '\0';
  return out;
}

static int
oom (parser *ps)
{
  ps->status = bl_fail (ps->err, BL_ENOMEM, ps->where, "out of memory parsing terms");
  return ps->status;
}

static void
skip_space (parser *ps)
{
  while (ps->s[ps->pos] && isspace ((unsigned char) ps->s[ps->pos]))
    ps->pos++;
}

/* Fail with "at character N: what expected after 'LAST'" at the cursor. */
static int
expected (parser *ps, const char *what, const char *last)
{
  ps->status = bl_fail (ps->err, BL_ESPEC, ps->where, "at character %zu: expected %s after '%s'",
                        ps->pos + 1, what, last);
  return ps->status;
}

static bl_term *parse_term (parser *ps, unsigned depth);

/* A bracketed name; the cursor is on '['.  Returns the name (brackets removed, ']]' made ']')
   or NULL with ps->status set. */
static char *
parse_bracket (parser *ps)
{
  const size_t open = ps->pos;
  size_t len = 0, k = 0, i = open + 1;
  char *name;
  for (;;) {                                /* measure, and find the closing bracket */
    if (!ps->s[i]) {
      ps->status = bl_fail (ps->err, BL_ESPEC, ps->where,
                            "at character %zu: expected ']' to close the name begun at "
                            "character %zu", i + 1, open + 1);
      return NULL;
    }
    if (ps->s[i] == ']') {
      if (ps->s[i + 1] != ']')
        break;
      i++;
    }
    len++;
    i++;
  }
  if (len == 0) {
    ps->status = bl_fail (ps->err, BL_ESPEC, ps->where,
                          "at character %zu: empty name in brackets", open + 1);
    return NULL;
  }
  name = bl_malloc (len + 1);
  if (!name) {
    oom (ps);
    return NULL;
  }
  for (size_t j = open + 1; j < i; j++) {
    name[k++] = ps->s[j];
    if (ps->s[j] == ']')
      j++;                                  /* skip the second of a doubled ']' */
  }
  name[k] = '\0';
  ps->pos = i + 1;
  return name;
}

static bl_term *
new_node (parser *ps, bl_term_kind kind)
{
  bl_term *t = bl_calloc (1, sizeof *t);
  if (!t) {
    oom (ps);
    return NULL;
  }
  t->kind = kind;
  return t;
}

/* Build T's label from its kind and its arguments' labels (K formatted for pow). */
static int
make_label (parser *ps, bl_term *t)
{
  static const char *const word[] = { "", "log", "sqrt", "exp", "pow", "cross" };
  char num[32] = "";
  size_t len;
  if (t->kind == BL_TERM_COL) {
    t->label = name_label (t->name);
    return t->label ? BL_OK : oom (ps);
  }
  if (t->kind == BL_TERM_POW)
    bl_format_shortest (t->k, num);
  len = strlen (word[t->kind]) + strlen (t->a->label) + (t->b ? strlen (t->b->label) : 0)
        + strlen (num) + 4;
  t->label = bl_malloc (len);
  if (!t->label)
    return oom (ps);
  if (t->kind == BL_TERM_POW)
    snprintf (t->label, len, "pow(%s,%s)", t->a->label, num);
  else if (t->kind == BL_TERM_CROSS)
    snprintf (t->label, len, "cross(%s,%s)", t->a->label, t->b->label);
  else
    snprintf (t->label, len, "%s(%s)", word[t->kind], t->a->label);
  return BL_OK;
}

/* The number after "pow(t," : a finite real in C syntax. */
static int
parse_number (parser *ps, double *k, char numtext[32])
{
  const char *start;
  char *end;
  double v;
  size_t m;
  skip_space (ps);
  start = ps->s + ps->pos;
  /* strtod would also take "inf", "nan" and hex floats; the first two are caught below, the
     last is C syntax and so accepted. */
  v = strtod (start, &end);
  if (end == start || !isfinite (v)) {
    ps->status = bl_fail (ps->err, BL_ESPEC, ps->where, "at character %zu: pow needs a finite "
                          "number as its second argument", ps->pos + 1);
    return ps->status;
  }
  m = (size_t) (end - start);
  snprintf (numtext, 32, "%.*s%s", (int) (m < 24 ? m : 24), start, m < 24 ? "" : "...");
  ps->pos += m;
  *k = v;
  return BL_OK;
}

/* A function call of KIND; the cursor is on '(' after the function word. */
static bl_term *
parse_call (parser *ps, bl_term_kind kind, unsigned depth)
{
  bl_term *t = new_node (ps, kind);
  char numtext[32];
  if (!t)
    return NULL;
  ps->pos++;                                /* '(' */
  t->a = parse_term (ps, depth + 1);
  if (!t->a)
    goto fail;
  skip_space (ps);
  if (kind == BL_TERM_POW || kind == BL_TERM_CROSS) {
    if (ps->s[ps->pos] != ',') {
      expected (ps, "','", t->a->label);
      goto fail;
    }
    ps->pos++;
    if (kind == BL_TERM_POW) {
      if (parse_number (ps, &t->k, numtext) != BL_OK)
        goto fail;
    } else {
      t->b = parse_term (ps, depth + 1);
      if (!t->b)
        goto fail;
    }
    skip_space (ps);
  }
  if (ps->s[ps->pos] != ')') {
    expected (ps, "')'", kind == BL_TERM_POW ? numtext
                         : kind == BL_TERM_CROSS ? t->b->label : t->a->label);
    goto fail;
  }
  ps->pos++;
  if (make_label (ps, t) != BL_OK)
    goto fail;
  return t;
fail:
  term_free (t);
  return NULL;
}

static bl_term *
parse_term (parser *ps, unsigned depth)
{
  size_t start;
  int c;
  skip_space (ps);
  start = ps->pos;
  c = (unsigned char) ps->s[start];
  if (depth > BL_TERMS_MAX_DEPTH) {
    ps->status = bl_fail (ps->err, BL_ESPEC, ps->where, "at character %zu: terms nested "
                          "more than %d deep", start + 1, BL_TERMS_MAX_DEPTH);
    return NULL;
  }
  if (c == '\0' || c == ',' || c == ')') {
    ps->status = bl_fail (ps->err, BL_ESPEC, ps->where, "empty term at character %zu",
                          start + 1);
    return NULL;
  }
  if (c == '[') {
    bl_term *t = new_node (ps, BL_TERM_COL);
    if (!t)
      return NULL;
    t->name = parse_bracket (ps);
    if (!t->name || make_label (ps, t) != BL_OK) {
      term_free (t);
      return NULL;
    }
    return t;
  }
  if (is_ident_start (c)) {
    size_t end = start + 1, after;
    bl_term *t;
    while (is_ident_char ((unsigned char) ps->s[end]))
      end++;
    ps->pos = end;
    skip_space (ps);
    after = ps->pos;
    if (ps->s[after] == '(') {
      const size_t len = end - start;
      for (size_t f = 0; f < sizeof functions / sizeof functions[0]; f++)
        if (strlen (functions[f].word) == len
            && memcmp (functions[f].word, ps->s + start, len) == 0)
          return parse_call (ps, functions[f].kind, depth);
      ps->status = bl_fail (ps->err, BL_ESPEC, ps->where,
                            "at character %zu: unknown function '%.*s' (expected log, sqrt, "
                            "exp, pow or cross)", start + 1, (int) len, ps->s + start);
      return NULL;
    }
    t = new_node (ps, BL_TERM_COL);
    if (!t)
      return NULL;
    t->name = bl_malloc (end - start + 1);
    if (!t->name) {
      oom (ps);
      term_free (t);
      return NULL;
    }
    memcpy (t->name, ps->s + start, end - start);
    t->name[end - start] = '\0';
    if (make_label (ps, t) != BL_OK) {
      term_free (t);
      return NULL;
    }
    return t;
  }
  if (isprint (c))
    ps->status = bl_fail (ps->err, BL_ESPEC, ps->where, "at character %zu: expected a column "
                          "name, '[name]' or a function, found '%c'", start + 1, c);
  else
    ps->status = bl_fail (ps->err, BL_ESPEC, ps->where, "at character %zu: expected a column "
                          "name, '[name]' or a function, found byte 0x%02x", start + 1,
                          (unsigned) c);
  return NULL;
}

static int
append (parser *ps, bl_terms *list, size_t *cap, bl_term *t)
{
  if (list->n == *cap) {
    const size_t ncap = *cap ? 2 * *cap : 8;
    bl_term **nt = bl_realloc (list->t, ncap * sizeof *nt);
    if (!nt)
      return oom (ps);
    list->t = nt;
    *cap = ncap;
  }
  list->t[list->n++] = t;
  return BL_OK;
}

bl_terms *
bl_terms_parse (const char *text, const char *where, bl_err *err)
{
  parser ps = { text, 0, where, err, BL_OK };
  size_t cap = 0;
  bl_terms *list;
  if (!text)
    text = ps.s = "";
  skip_space (&ps);
  if (!text[ps.pos]) {
    bl_fail (err, BL_ESPEC, where, "no terms given");
    return NULL;
  }
  list = bl_calloc (1, sizeof *list);
  if (!list) {
    oom (&ps);
    return NULL;
  }
  for (;;) {
    bl_term *t = parse_term (&ps, 0);
    if (!t)
      goto fail;
    for (size_t i = 0; i < list->n; i++)
      if (strcmp (list->t[i]->label, t->label) == 0) {
        bl_fail (err, BL_ESPEC, where, "duplicate term '%s'", t->label);
        term_free (t);
        goto fail;
      }
    if (append (&ps, list, &cap, t) != BL_OK) {
      term_free (t);
      goto fail;
    }
    skip_space (&ps);
    if (!text[ps.pos])
      break;
    if (text[ps.pos] != ',') {
      expected (&ps, "',' or the end of the list", t->label);
      goto fail;
    }
    ps.pos++;
  }
  return list;
fail:
  bl_terms_free (list);
  return NULL;
}
