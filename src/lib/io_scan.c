/* io_scan.c -- the number forms the reader refuses (see io_scan.h, which holds the scanners
   themselves, inline).  Layer: io. */
#include <stdlib.h>
#include "io_scan.h"

/* Nonzero when S (N bytes, S[N] writable) is one of the forms that strtod reads as a number
   but the grammar refuses: hex ("0x1A", "0x1p3"), "inf", "infinity", "nan", "nan(...)", with
   an optional sign.  Such a cell is refused outright rather than taken for a label. */
int
bl_io_strtod_would_take (char *s, size_t n)
{
  char *stop;
  size_t i = 0;
  if (n > 0 && (s[0] == '+' || s[0] == '-'))
    i++;
  if (i == n)
    return 0;
  if (!(s[i] == 'i' || s[i] == 'I' || s[i] == 'n' || s[i] == 'N'
        || (s[i] == '0' && i + 1 < n && (s[i + 1] == 'x' || s[i + 1] == 'X'))))
    return 0;
  s[n] = '\0';
  (void) strtod (s, &stop);
  return stop == s + n;
}
