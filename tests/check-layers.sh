#!/bin/sh
# check-layers.sh -- 'make check' runs this: no file of libballast includes a header of, or
# calls a function defined in, a higher layer (src/lib/LAYERS; tests/check-layers.py).
exec python3 "${top_srcdir:?}/tests/check-layers.py" "$top_srcdir" "${builddir:?}"
