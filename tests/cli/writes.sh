#!/bin/sh
# writes.sh -- writes that fail are named, and early (issue 14, class 5): a full device
# (/dev/full, ENOSPC on every write: Linux's documented full device), symbolic links and
# folders as outputs, empty file names, a read-only and a full report folder (small tmpfs
# mounts when this test may mount them; skipped with a message otherwise).  Each case
# records the exit status, the message, and the checksum of what must stay unchanged.
#
# Run by 'make check' with BALLAST and top_srcdir set; by hand:
#   BALLAST=./ballast top_srcdir=. sh tests/cli/writes.sh

# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

cat >d.csv <<'EOF'
y,x
4,0.5
5.5,1.5
9.5,2.5
13.5,3.5
15,4.5
EOF
printf 'x,y\n1,5.1\n2.25,8.6\n' >new.csv
m='--response y --terms x'
nospc='write failed: No space left on device'

kept () {
  if [ "$(cksum <"$2")" = "$3" ]; then
    pass "$1: '$2' unchanged"
  else
    fail "$1: '$2' unchanged" "checksum changed"
  fi
}

bl fit d.csv $m --save m.json
expect_rc "control: fit --save" 0

# ---- every write and close checked: standard output and -o on a full device
if [ -w /dev/full ]; then
  for c in "predict m.json new.csv" "fit d.csv $m" "fit d.csv $m --json" "diagnose d.csv $m" \
           "compare d.csv $m --folds 0" "fit --help"; do
    # shellcheck disable=SC2086
    $BALLAST $c >/dev/full 2>"$tmp/.err"
    rc=$?
    expect_rc "$c >/dev/full exit" 1
    expect_err "$c >/dev/full message" "ballast: standard output: $nospc"
  done
  bl predict m.json new.csv -o /dev/full
  expect_rc "predict -o /dev/full exit" 1
  expect_err "predict -o /dev/full message" "ballast: /dev/full: $nospc"
  bl fit d.csv $m -o /dev/full
  expect_rc "fit -o /dev/full exit" 1
  expect_err "fit -o /dev/full message" "ballast: /dev/full: $nospc"
  bl fit d.csv $m -o r.txt --save /dev/full
  expect_rc "fit --save /dev/full exit" 1
  expect_err "fit --save /dev/full message" "ballast: /dev/full: $nospc"
  bl diagnose d.csv $m -o r.txt --residuals /dev/full
  expect_rc "diagnose --residuals /dev/full exit" 1
  expect_err "diagnose --residuals /dev/full message" "ballast: /dev/full: $nospc"
  # the scores line on stdout, after the CSV went to a file
  $BALLAST predict m.json new.csv -o p.csv >/dev/full 2>"$tmp/.err"
  rc=$?
  expect_rc "predict -o FILE, scores >/dev/full exit" 1
  expect_err "predict -o FILE, scores >/dev/full message" "ballast: standard output: $nospc"
else
  echo "skip: /dev/full is not writable here"
fi

# ---- links, devices and folders as outputs
printf 'keep me\n' >target.txt
s=$(cksum <target.txt)
ln -s target.txt link.txt
bl fit d.csv $m -o link.txt
expect_rc "-o link to a regular file exit" 2
expect_err "-o link to a regular file message" "ballast: --output: 'link.txt' is a symbolic link to the regular file 'target.txt'"
kept "-o link to a regular file" target.txt "$s"
if [ -L link.txt ]; then pass "-o link to a regular file: the link stays"; else fail "-o link to a regular file: the link stays" "replaced"; fi
bl fit d.csv $m --save link.txt
expect_rc "--save link to a regular file exit" 2
expect_err "--save link to a regular file message" "ballast: --save: 'link.txt' is a symbolic link"
bl diagnose d.csv $m --residuals link.txt
expect_rc "--residuals link to a regular file exit" 2
ln -s missing.txt dangling.txt
bl predict m.json new.csv -o dangling.txt
expect_rc "-o dangling link exit" 2
expect_err "-o dangling link message" "'dangling.txt' is a symbolic link to 'missing.txt', which does not exist"
if [ -L dangling.txt ] && [ ! -e missing.txt ]; then pass "-o dangling link: nothing made"; else fail "-o dangling link: nothing made" "changed"; fi
mkdir folder
bl compare d.csv $m -o folder
expect_rc "-o a folder exit" 2
expect_err "-o a folder message" "ballast: --output: 'folder' is a folder"
ln -s /dev/null null.out
bl fit d.csv $m -o null.out
expect_rc "-o link to /dev/null (written in place) exit" 0
if [ -L null.out ]; then pass "-o link to /dev/null: the link stays"; else fail "-o link to /dev/null: the link stays" "replaced"; fi
if [ -L /dev/stdout ]; then
  $BALLAST predict m.json new.csv -o /dev/stdout >via-stdout.csv 2>"$tmp/.err"
  rc=$?
  expect_rc "-o /dev/stdout >FILE exit" 0
  if [ -L /dev/stdout ]; then pass "-o /dev/stdout: the link stays"; else fail "-o /dev/stdout: the link stays" "replaced"; fi
  if head -1 via-stdout.csv | grep -q '^row,mean,'; then pass "-o /dev/stdout: the CSV in FILE"; else fail "-o /dev/stdout: the CSV in FILE" "$(head -c 80 via-stdout.csv)"; fi
  expect_err "-o /dev/stdout: scores on stderr" "scores on 'new.csv'"
else
  echo "skip: /dev/stdout is not a symbolic link here"
fi

# ---- empty file names: usage errors before any work
for c in "fit d.csv $m -o" "fit d.csv $m --save" "diagnose d.csv $m -o" \
         "diagnose d.csv $m --residuals" "compare d.csv $m -o" "predict m.json new.csv -o" \
         "run s.spec -o"; do
  # shellcheck disable=SC2086
  bl $c ""
  expect_rc "$c '' exit" 2
  expect_err "$c '' message" "is empty"
done
bl fit "" $m
expect_rc "fit '' (DATA) exit" 2
expect_err "fit '' (DATA) message" "ballast: DATA: "
bl predict "" new.csv
expect_rc "predict '' (MODEL) exit" 2
expect_err "predict '' (MODEL) message" "ballast: MODEL: the file name is empty"
bl run ""
expect_rc "run '' (SPEC) exit" 2

# ---- a missing folder: found before any work
bl fit d.csv $m -o nodir/r.txt
expect_rc "-o into a missing folder exit" 1
expect_err "-o into a missing folder message" "ballast: nodir/r.txt: cannot create a file in its folder: No such file or directory"

# ---- a read-only and a full report folder (tmpfs mounts)
mkdir sp
cp d.csv sp/d.csv
printf '[job j1]\ndata = d.csv\nresponse = y\nterms = x\nfamily = gaussian\n' >sp/s.spec
printf '[job j2]\ndata = d.csv\nresponse = y\nterms = x\n' >>sp/s.spec
mkdir ro full
if mount -t tmpfs -o ro,size=64k tmpfs ro 2>/dev/null; then
  bl run sp/s.spec -o ro
  expect_rc "run into a read-only folder exit" 1
  expect_err "run into a read-only folder message" "ballast: ro: the output folder is not writable: Read-only file system"
  expect_no_err "run into a read-only folder: no job ran" "j1"
  bl fit d.csv $m -o ro/r.txt
  expect_rc "fit -o into a read-only folder exit" 1
  expect_err "fit -o into a read-only folder message" "ballast: ro/r.txt: cannot create a file in its folder: Read-only file system"
  umount ro
else
  echo "skip: cannot mount a tmpfs (read-only folder cases)"
fi
if mount -t tmpfs -o size=1m tmpfs full 2>/dev/null; then
  # a previous run's complete report, then a full disk: no job keeps a success result.json
  bl run -q sp/s.spec -o full/out
  expect_rc "full disk: a first run fits" 0
  dd if=/dev/zero of=full/filler bs=4096 count=256 2>/dev/null
  bl run sp/s.spec -o full/out
  expect_rc "full disk: run exit" 1
  expect_err "full disk: the reason" "No space left on device"
  for j in j1 j2; do
    f=full/out/$j/result.json
    if [ ! -e "$f" ] || grep -q '"status": "failed"' "$f"; then
      pass "full disk: $j has no success result.json"
    else
      fail "full disk: $j has no success result.json" "$(head -c 100 "$f")"
    fi
  done
  if [ -e full/out/summary.json ] && ! grep -q '"status": "failed"' full/out/summary.json; then
    fail "full disk: no earlier summary stands" "summary.json says done"
  else
    pass "full disk: no earlier summary stands"
  fi
  umount full
else
  echo "skip: cannot mount a tmpfs (full disk cases)"
fi

finish
