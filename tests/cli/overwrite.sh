#!/bin/sh
# overwrite.sh -- no output of a command replaces one of its inputs or another of its outputs
# (issue 14, class 1).  Each case records the input's checksum before and after, the exit
# status (2: refused before any work) and the message naming both options.  The rule is
# the file identity of POSIX stat (st_dev, st_ino) for files that exist and the resolved
# name for those that do not (common practice, no source).
#
# Run by 'make check' with BALLAST and top_srcdir set; by hand:
#   BALLAST=./ballast top_srcdir=. sh tests/cli/overwrite.sh

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
printf 'x\n1\n2.25\n' >new.csv

# kept NAME FILE SUM: FILE still has checksum SUM (taken before the run).
kept () {
  if [ "$(cksum <"$2")" = "$3" ]; then
    pass "$1: '$2' unchanged"
  else
    fail "$1: '$2' unchanged" "checksum changed"
  fi
}

# refused NAME FILE TEXT CMD...: CMD exits 2 with TEXT on stderr and FILE unchanged.
refused () {
  rf_name=$1 rf_file=$2 rf_text=$3
  shift 3
  rf_sum=$(cksum <"$rf_file")
  bl "$@"
  expect_rc "$rf_name exit" 2
  expect_err "$rf_name message" "$rf_text"
  kept "$rf_name" "$rf_file" "$rf_sum"
}

m='--response y --terms x'
same_in='an output must not replace an input'
same_out='two outputs cannot share one file'

# a control: distinct outputs work, so the refusals below are not a broken command
bl fit d.csv $m -o r.txt --save m.json
expect_rc "control: fit with distinct outputs" 0

# ---- fit
refused "fit -o DATA" d.csv "ballast: --output: 'd.csv' is the same file as DATA; $same_in" \
  fit d.csv $m -o d.csv
refused "fit --save DATA" d.csv "ballast: --save: 'd.csv' is the same file as DATA; $same_in" \
  fit d.csv $m --save d.csv
refused "fit -o ./DATA" d.csv "'./d.csv' is the same file as DATA 'd.csv'" \
  fit d.csv $m -o ./d.csv
mkdir sub
refused "fit -o sub/../DATA" d.csv "is the same file as DATA" fit d.csv $m -o sub/../d.csv
ln d.csv hard.csv
refused "fit -o hard link of DATA" d.csv "'hard.csv' is the same file as DATA 'd.csv'" \
  fit d.csv $m -o hard.csv
ln -s d.csv soft.csv
refused "fit -o symbolic link to DATA" d.csv "'soft.csv' is the same file as DATA 'd.csv'" \
  fit d.csv $m -o soft.csv
refused "fit -o X --save X" m.json "ballast: --output: 'm.json' is the same file as --save; $same_out" \
  fit d.csv $m -o m.json --save m.json
bl fit d.csv $m -o new1.json --save ./new1.json
expect_rc "fit two outputs, one new file: exit" 2
expect_err "fit two outputs, one new file: message" "is the same file as --save './new1.json'"
if [ -e new1.json ]; then fail "fit two outputs, one new file: nothing made" "new1.json"; else pass "fit two outputs, one new file: nothing made"; fi
s=$(cksum <d.csv)
bl_in d.csv fit - $m -o d.csv
expect_rc "fit - <DATA -o DATA exit" 2
expect_err "fit - <DATA -o DATA message" "'d.csv' is the same file as DATA standard input"
kept "fit - <DATA -o DATA" d.csv "$s"
s=$(cksum <d.csv)
$BALLAST fit d.csv $m >>d.csv 2>"$tmp/.err"
rc=$?
expect_rc "fit >>DATA exit" 2
expect_err "fit >>DATA message" "the report: standard output is the same file as DATA 'd.csv'"
kept "fit >>DATA" d.csv "$s"

# ---- diagnose
refused "diagnose --residuals DATA" d.csv "ballast: --residuals: 'd.csv' is the same file as DATA" \
  diagnose d.csv $m --residuals d.csv
refused "diagnose -o DATA" d.csv "ballast: --output: 'd.csv' is the same file as DATA" \
  diagnose d.csv $m -o d.csv
refused "diagnose -o X --residuals X" r.txt "ballast: --output: 'r.txt' is the same file as --residuals; $same_out" \
  diagnose d.csv $m -o r.txt --residuals r.txt
bl diagnose d.csv $m --residuals -
expect_rc "diagnose --residuals - with the report on stdout: exit" 2
expect_err "diagnose --residuals - with the report on stdout: message" "the report: standard output is the same file as --residuals; $same_out"
expect_out_empty "diagnose --residuals - with the report on stdout: nothing written"

# ---- compare
refused "compare -o DATA" d.csv "ballast: --output: 'd.csv' is the same file as DATA" \
  compare d.csv $m -o d.csv

# ---- predict
refused "predict -o NEWDATA" new.csv "ballast: --output: 'new.csv' is the same file as NEWDATA" \
  predict m.json new.csv -o new.csv
refused "predict -o MODEL" m.json "ballast: --output: 'm.json' is the same file as MODEL" \
  predict m.json new.csv -o m.json
s=$(cksum <new.csv)
$BALLAST predict m.json new.csv -o p.csv >>new.csv 2>"$tmp/.err"
rc=$?
expect_rc "predict -o FILE, scores >>NEWDATA: exit" 2
expect_err "predict -o FILE, scores >>NEWDATA: message" "the scores: standard output is the same file as NEWDATA 'new.csv'"
kept "predict -o FILE, scores >>NEWDATA" new.csv "$s"

# ---- run
mkdir sp
cp d.csv sp/d.csv
printf '[job j1]\ndata = d.csv\nresponse = y\nterms = x\nfamily = gaussian\n' >sp/s.spec
refused "run -o DATA" sp/d.csv "ballast: --output: 'sp/d.csv' is the same file as the data of job 'j1' (sp/s.spec:1); $same_in" \
  run -q sp/s.spec -o sp/d.csv
refused "run -o SPEC" sp/s.spec "ballast: --output: 'sp/s.spec' is the same file as SPEC; $same_in" \
  run -q sp/s.spec -o sp/s.spec
bl run -q sp/s.spec -o sp/out
expect_rc "run control: a fresh OUTDIR" 0
cp d.csv sp/out/j1/result.json
printf '[job j1]\ndata = out/j1/result.json\nresponse = y\nterms = x\nfamily = gaussian\n' >sp/s2.spec
refused "run: data at a job's result.json in OUTDIR" sp/out/j1/result.json "ballast: --output: 'sp/out/j1/result.json' is the same file as the data of job 'j1' (sp/s2.spec:1)" \
  run -q sp/s2.spec -o sp/out
printf '[job j1]\ndata = summary.csv\nresponse = y\nterms = x\nfamily = gaussian\n' >sp/out/s3.spec
cp d.csv sp/out/summary.csv
refused "run: data at OUTDIR/summary.csv" sp/out/summary.csv "'sp/out/summary.csv' is the same file as the data of job 'j1'" \
  run -q sp/out/s3.spec -o sp/out
printf '[job j1]\ndata = ../d.csv\nresponse = y\nterms = x\nfamily = gaussian\n' >sp/out/index.html
refused "run: the spec at OUTDIR/index.html" sp/out/index.html "'sp/out/index.html' is the same file as SPEC" \
  run -q sp/out/index.html -o sp/out
# the default OUTDIR (NAME-report beside the working folder) is checked too
cp d.csv s-report
printf '[job j1]\ndata = s-report\nresponse = y\nterms = x\nfamily = gaussian\n' >s.spec
refused "run: default OUTDIR is the data" s-report "ballast: OUTDIR: 's-report' is the same file as the data of job 'j1'" \
  run -q s.spec

finish
