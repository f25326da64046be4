#!/usr/bin/env python3
"""check-layers.py -- fail when a file of libballast reaches up a layer.

Usage: check-layers.py SRCDIR [OBJDIR]
  SRCDIR  the source tree (src/lib/LAYERS and src/lib/*.[ch] are read)
  OBJDIR  optional: the build tree; each src/lib/*.o (or .libs/*.o) found there is read with
          nm, so that a call into a higher layer fails too, not only an include

The layers are listed in src/lib/LAYERS, lowest first.  A file may include headers of its own
layer and below, and call functions defined in its own layer and below.  Every file must
belong to exactly one layer.  Prints one line per violation ("file.c: includes 'x.h' (layer 5
job) from layer 3 fit") and exits 1 when there is any, 0 otherwise, 2 on a usage error.
"""
import fnmatch
import glob
import os
import re
import subprocess
import sys


def read_layers(path):
    layers = []
    with open(path) as f:
        for lineno, line in enumerate(f, 1):
            line = line.split("#", 1)[0].strip()
            if not line:
                continue
            m = re.match(r"(\d+)\s+(\w+):\s*(.*)$", line)
            if not m:
                sys.exit("%s:%d: expected 'NUMBER NAME: PATTERN...'" % (path, lineno))
            layers.append((int(m.group(1)), m.group(2), m.group(3).split()))
    return layers


def layer_of(stem, layers):
    hits = [(n, name) for n, name, pats in layers if any(fnmatch.fnmatch(stem, p) for p in pats)]
    return hits


def main():
    if len(sys.argv) not in (2, 3):
        print(__doc__.strip().split("\n")[2], file=sys.stderr)
        return 2
    src = os.path.join(sys.argv[1], "src", "lib")
    objdir = os.path.join(sys.argv[2], "src", "lib") if len(sys.argv) == 3 else None
    layers = read_layers(os.path.join(src, "LAYERS"))
    bad = []
    files = sorted(glob.glob(os.path.join(src, "*.c")) + glob.glob(os.path.join(src, "*.h")))
    level = {}
    for path in files:
        stem = os.path.splitext(os.path.basename(path))[0]
        hits = layer_of(stem, layers)
        if len(hits) != 1:
            bad.append("%s: in %s layers of src/lib/LAYERS (%s)" % (
                os.path.basename(path), "no" if not hits else "several",
                ", ".join(name for _, name in hits)))
            continue
        level[stem] = hits[0]
    # includes
    for path in files:
        stem = os.path.splitext(os.path.basename(path))[0]
        if stem not in level:
            continue
        with open(path, errors="replace") as f:
            for lineno, line in enumerate(f, 1):
                m = re.match(r'\s*#\s*include\s+"([^"]+)\.h"', line)
                if not m:
                    continue
                inc = os.path.basename(m.group(1))
                if inc not in level:
                    continue   # config.h and the like
                if level[inc][0] > level[stem][0]:
                    bad.append("%s:%d: includes '%s.h' (layer %d %s) from layer %d %s" % (
                        os.path.basename(path), lineno, inc, level[inc][0], level[inc][1],
                        level[stem][0], level[stem][1]))
    # calls, from the objects' symbol tables
    if objdir:
        objs = {}
        for path in files:
            stem = os.path.splitext(os.path.basename(path))[0]
            if not path.endswith(".c"):
                continue
            # the object of each current source (a stale object of a removed or renamed
            # file is never read): libtool's PIC object, the newest of its possible names
            cands = [os.path.join(objdir, d, pre + stem + ".o")
                     for d in (".libs", "") for pre in ("libballast_core_la-", "")]
            cands = [c for c in cands if os.path.exists(c)]
            if cands:
                objs[stem] = max(cands, key=os.path.getmtime)
        defined, undef = {}, {}
        for stem, o in objs.items():
            out = subprocess.run(["nm", o], capture_output=True, text=True).stdout
            for line in out.splitlines():
                parts = line.split()
                if len(parts) == 3 and parts[1] in "TDRB":
                    defined[parts[2]] = stem
                elif len(parts) == 2 and parts[0] == "U":
                    undef.setdefault(stem, set()).add(parts[1])
        for stem, syms in sorted(undef.items()):
            if stem not in level:
                continue
            for s in sorted(syms):
                d = defined.get(s)
                if d and d in level and level[d][0] > level[stem][0]:
                    bad.append("%s.c: calls '%s' of %s.c (layer %d %s) from layer %d %s" % (
                        stem, s, d, level[d][0], level[d][1], level[stem][0], level[stem][1]))
    for b in bad:
        print(b)
    if not bad:
        print("check-layers: %d files in %d layers, no upward include%s" % (
            len(level), len(layers), " or call" if objdir else ""))
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
