#!/bin/sh
# run.sh -- 'ballast run': spec errors, failing jobs, report folder contents, determinism,
# foreign files and symbolic links in the report folder.
# shellcheck source=tests/cli/lib.sh
. "${top_srcdir:?set top_srcdir to the source tree}/tests/cli/lib.sh"

data=$top_srcdir/data

# A spec with a good job and a job whose data file is missing.
cat > two.spec <<SPEC
# two jobs, one of them broken
[defaults]
data = $data/pumps.csv.gz
response = repair_hours
terms = age_years, load_pct, site
folds = 0

[job good]
candidates = ls, ls-log, gam-log

[job broken]
data = no-such-file.csv
SPEC
bl run two.spec -o out1 -q
expect_rc "good + missing data: exit 1" 1
if [ -s out1/good/result.json ] && [ -s out1/good/residuals.csv ] && [ -s out1/index.html ]; then
  pass "good job's outputs complete"
else
  fail "good job's outputs complete" "missing files in out1/good"
fi
run python3 -c '
import json, sys
s = json.load(open("out1/summary.json"))
jobs = {j["job"]: j for j in s["jobs"]}
assert jobs["good"]["status"] == "done", jobs["good"]
assert jobs["good"]["winner"] == "gam-log", jobs["good"]
assert jobs["broken"]["status"] == "failed", jobs["broken"]
assert "no-such-file.csv" in jobs["broken"]["message"], jobs["broken"]
assert s["failed"] == 1
'
expect_rc "summary.json: the bad job's reason" 0
run python3 -c '
import csv
rows = list(csv.DictReader(open("out1/summary.csv")))
assert [r["job"] for r in rows] == ["good", "broken"]
assert list(rows[0].keys()) == ["job", "status", "method", "winner", "aic", "delta",
                                "spread_ratio", "n", "message"]
assert rows[0]["status"] == "done" and rows[1]["status"] == "failed"
assert float(rows[0]["aic"]) > 0 and rows[0]["n"] == "2966"
'
expect_rc "summary.csv: columns and rows" 0

# Byte-identical reruns, with one and two jobs at a time.
bl run "$data/demo.spec" -o seq -j 1 -q
expect_rc "demo with -j 1" 0
bl run "$data/demo.spec" -o par -j 2 -q
expect_rc "demo with -j 2" 0
same=1
for f in summary.json summary.csv index.html repair-hours/result.json \
         repair-hours/residuals.csv parts-cost/result.json unplanned-stops/result.json \
         repair-gamma/result.json repair-gamma/residuals.csv; do
  cmp -s "seq/$f" "par/$f" || { same=0; echo "differs: $f"; }
done
if [ "$same" = 1 ]; then pass "-j 1 and -j 2 byte-identical"; else fail "-j 1 and -j 2 byte-identical" "see above"; fi

# The same with the BLAS on one and on two threads (ballast's own kernels do the fitting; this
# checks that nothing linked through GSL's CBLAS changes a byte).
OPENBLAS_NUM_THREADS=1 bl run "$data/demo.spec" -o blas1 -q
OPENBLAS_NUM_THREADS=2 bl run "$data/demo.spec" -o blas2 -q
same=1
for f in summary.json summary.csv index.html repair-hours/result.json parts-cost/result.json \
         unplanned-stops/result.json repair-gamma/residuals.csv; do
  cmp -s "blas1/$f" "blas2/$f" || { same=0; echo "differs: $f"; }
  cmp -s "blas1/$f" "seq/$f" || { same=0; echo "differs from -j 1: $f"; }
done
if [ "$same" = 1 ]; then pass "OpenBLAS on 1 and 2 threads byte-identical"; else fail "OpenBLAS on 1 and 2 threads byte-identical" "see above"; fi

# Progress on stderr only when it is a terminal: quiet under make (above), "job i of N" on a
# pseudo-terminal (util-linux 'script').
if command -v script >/dev/null 2>&1 && [ -z "$VALGRIND" ]; then
  script -qec "'$BALLAST' run '$data/demo.spec' -o tty-out" "$tmp/tty.txt" > /dev/null 2>&1
  if grep -q "job 1 of 4 done" "$tmp/tty.txt" && grep -q "job 4 of 4 done" "$tmp/tty.txt"; then
    pass "progress on a terminal"
  else
    fail "progress on a terminal" "no 'job i of 4' lines"
  fi
fi
bl run "$data/demo.spec" -o notty
if grep -q "job 1 of" "$tmp/.err"; then fail "no progress when stderr is not a terminal" "progress printed"; else pass "no progress when stderr is not a terminal"; fi

# The default folder is NAME-report in the current folder.
cp "$data/demo.spec" mydemo.spec
sed -i "s|^data *= *|data = $data/|" mydemo.spec 2>/dev/null || true
bl run mydemo.spec -q
if [ -s mydemo-report/summary.json ]; then pass "default OUTDIR NAME-report"; else fail "default OUTDIR NAME-report" "no mydemo-report/summary.json"; fi

# Foreign files stay; a planted symbolic link is not followed.
mkdir -p keep/good
echo "mine" > keep/notes.txt
echo "target" > victim.txt
ln -s ../victim.txt keep/good/result.json
mkdir -p elsewhere
ln -s ../elsewhere keep/broken
bl run two.spec -o keep -q
if [ "$(cat keep/notes.txt)" = "mine" ]; then pass "foreign file kept"; else fail "foreign file kept" "notes.txt changed"; fi
if [ "$(cat victim.txt)" = "target" ]; then pass "planted link in a job folder not followed"; else fail "planted link not followed" "victim.txt was overwritten"; fi
if [ -z "$(ls elsewhere)" ]; then pass "linked job folder not written through"; else fail "linked job folder not written through" "files appeared in elsewhere/"; fi
if [ -L keep/good/result.json ] || [ -f keep/good/result.json ]; then pass "job file replaced by a real file, not through the link"; fi
ln -s keep linkdir
bl run two.spec -o linkdir -q
expect_rc "OUTDIR a symbolic link: exit 1" 1

# Spec errors: exit 2, file and line, nothing written.
printf '[job a]\ndata = x.csv\nresponse = y\nfamly = gamma\n' > bad1.spec
bl run bad1.spec -o badout
expect_rc "unknown key: exit 2" 2
expect_err "unknown key: file and line" "bad1.spec:4"
expect_err "unknown key: names it" "unknown key 'famly'"
if [ ! -e badout ]; then pass "spec error: nothing written"; else fail "spec error: nothing written" "badout exists"; fi
printf '[job a]\ndata = x.csv\nresponse = y\n[job A]\ndata = x.csv\nresponse = y\n' > bad2.spec
bl run bad2.spec -o badout
expect_rc "case clash: exit 2" 2
expect_err "case clash: line" "bad2.spec:4"
printf '[job ../up]\ndata = x.csv\nresponse = y\n' > bad3.spec
bl run bad3.spec -o badout
expect_rc "job name with /: exit 2" 2
printf '[job a]\ndata = x.csv\nresponse = y\nterms = log(age\n' > bad4.spec
bl run bad4.spec -o badout
expect_rc "bad term syntax: exit 2" 2
expect_err "bad term syntax: line" "bad4.spec:4"
printf '[job summary.csv]\ndata = x.csv\nresponse = y\n' > bad5.spec
bl run bad5.spec -o badout
expect_rc "reserved name summary.csv: exit 2" 2
bl run no-such.spec
expect_rc "missing spec file: exit 1" 1
bl run
expect_rc "no spec: exit 2" 2
bl run two.spec --jobs 0
expect_rc "--jobs 0: exit 2" 2
bl run --help
expect_rc "run --help" 0

finish
