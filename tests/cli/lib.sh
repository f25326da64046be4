# lib.sh -- helpers shared by the command-line test scripts (tests/cli/*.sh); sourced, POSIX sh.
#
# Environment (set by 'make check', see AM_TESTS_ENVIRONMENT in Makefile.am):
#   BALLAST     path of the built ballast program (required)
#   top_srcdir  the source tree (required)
#   GEN_DEMO    path of the built data/gen_demo (needed by demo.sh only)
#   VALGRIND    optional command prefix, e.g. "valgrind -q --error-exitcode=99 --leak-check=full";
#               every ballast run is then '$VALGRIND "$BALLAST" ARG...'.  When BALLAST is a
#               libtool wrapper script, the prefix is run through 'libtool --mode=execute' so that
#               valgrind checks the program and not the shell that runs the wrapper.
#
# A script sources this file, makes its checks, and ends with 'finish', which prints
# "N passed, N failed" and exits 1 when any check failed.  Exit 99 (automake's "hard error")
# means the test could not run at all.
#
# Running a command:
#   run CMD ARG...            run CMD; stdout in $tmp/.out, stderr in $tmp/.err, status in $rc
#   bl ARG...                 run ballast with ARGs (under $VALGRIND when set)
#   bl_in FILE ARG...         the same with standard input read from FILE
# Checks on the last run (NAME names the check in every message):
#   expect_rc NAME N          exit status is N
#   expect_err NAME TEXT      stderr contains the fixed string TEXT
#   expect_no_err NAME TEXT   stderr does not contain TEXT
#   expect_err_empty NAME     nothing on stderr
#   expect_out NAME TEXT      stdout contains the fixed string TEXT
#   expect_out_empty NAME     nothing on stdout
#   expect_line1 NAME TEXT    the first line of stdout is exactly TEXT
#   expect_json NAME PATH VALUE [TOL]
#                             stdout is one JSON document whose value at PATH (e.g. fit.n,
#                             coef[1].beta) equals the JSON text VALUE; numbers within TOL
#                             (|got - VALUE| <= TOL max(1, |VALUE|)) when TOL is given
#   expect_json_has NAME PATH...   every PATH is present (its value may be null)
#   expect_py NAME EXPR       the Python expression EXPR is true, with d = the JSON document on
#                             stdout, load(FILE) reading another JSON file, and math imported
#   expect_same_coef NAME FILE     the coefficients (labels aside) and their standard errors on
#                             stdout are bit-for-bit those of the JSON document in FILE
#   save_out FILE             copy the last stdout to FILE

if [ -z "${BALLAST:-}" ] || [ -z "${top_srcdir:-}" ]; then
  echo "lib.sh: set BALLAST (the ballast program) and top_srcdir (the source tree)" >&2
  exit 99
fi
if ! command -v python3 >/dev/null 2>&1; then
  echo "lib.sh: python3 is needed to read the JSON output" >&2
  exit 99
fi

# The scripts run inside the temporary folder, so relative paths are made absolute first.
abspath () {
  case $1 in
    /*) printf '%s\n' "$1" ;;
    *) printf '%s/%s\n' "$(pwd)" "$1" ;;
  esac
}
BALLAST=$(abspath "$BALLAST")
top_srcdir=$(abspath "$top_srcdir")
if [ -n "${GEN_DEMO:-}" ]; then
  GEN_DEMO=$(abspath "$GEN_DEMO")
fi
if [ ! -x "$BALLAST" ]; then
  echo "lib.sh: '$BALLAST': not an executable file" >&2
  exit 99
fi

VALGRIND=${VALGRIND:-}
if [ -n "$VALGRIND" ] && grep -q 'temporary wrapper script for' "$BALLAST" 2>/dev/null; then
  lt=$(dirname "$BALLAST")/libtool
  if [ ! -x "$lt" ]; then
    echo "lib.sh: '$BALLAST' is a libtool wrapper, but there is no '$lt' to run it" >&2
    exit 99
  fi
  VALGRIND="$lt --mode=execute $VALGRIND"
fi

tmp=$(mktemp -d "${TMPDIR:-/tmp}/ballast-cli.XXXXXX") || exit 99
trap 'rm -rf "$tmp"' EXIT
trap 'exit 1' HUP INT TERM
cd "$tmp" || exit 99

npass=0
nfail=0
rc=0

pass () {
  npass=$((npass + 1))
  printf 'ok   %s\n' "$1"
}

# fail NAME WHAT: count a failure, and show the stderr of the last run to explain it.
fail () {
  nfail=$((nfail + 1))
  printf 'FAIL %s: %s\n' "$1" "$2"
  if [ -s "$tmp/.err" ]; then
    sed -n '1,8s/^/       stderr| /p' "$tmp/.err"
  fi
}

run () {
  "$@" >"$tmp/.out" 2>"$tmp/.err"
  rc=$?
  snapshot "$@"
}

# With BALLAST_SNAPSHOT set to a file, every run appends its command, exit status, stdout and
# stderr to that file, with the temporary folder's name replaced by TMP (tests/cli/snapshot.sh
# compares two such records: the behaviour before and after a change).
snapshot () {
  if [ -n "${BALLAST_SNAPSHOT:-}" ]; then
    {
      printf '@@ %s\n' "$*"
      printf '@@ rc %s\n' "$rc"
      cat "$tmp/.out"
      printf '\n@@ stderr\n'
      cat "$tmp/.err"
    } | sed -e "s|$tmp|TMP|g" -e "s|$BALLAST|BALLAST|g" -e "s|$top_srcdir|SRC|g" \
      >>"$BALLAST_SNAPSHOT"
  fi
}

bl () {
  # shellcheck disable=SC2086  # VALGRIND is a command with its options: split it
  run $VALGRIND "$BALLAST" "$@"
}

bl_in () {
  bl_in_file=$1
  shift
  # shellcheck disable=SC2086  # as in bl
  $VALGRIND "$BALLAST" "$@" <"$bl_in_file" >"$tmp/.out" 2>"$tmp/.err"
  rc=$?
  snapshot "<$bl_in_file" "$@"
}

save_out () {
  cp "$tmp/.out" "$1"
}

expect_rc () {
  if [ "$rc" -eq "$2" ]; then
    pass "$1"
  else
    fail "$1" "exit status $rc, expected $2"
  fi
}

expect_err () {
  if grep -F -q -e "$2" "$tmp/.err"; then
    pass "$1"
  else
    fail "$1" "stderr lacks '$2'"
  fi
}

expect_no_err () {
  if grep -F -q -e "$2" "$tmp/.err"; then
    fail "$1" "stderr has '$2'"
  else
    pass "$1"
  fi
}

expect_err_empty () {
  if [ -s "$tmp/.err" ]; then
    fail "$1" "stderr is not empty"
  else
    pass "$1"
  fi
}

expect_out () {
  if grep -F -q -e "$2" "$tmp/.out"; then
    pass "$1"
  else
    fail "$1" "stdout lacks '$2'"
  fi
}

expect_out_empty () {
  if [ -s "$tmp/.out" ]; then
    fail "$1" "stdout is not empty ($(wc -c <"$tmp/.out") bytes)"
  else
    pass "$1"
  fi
}

expect_line1 () {
  line1=$(sed -n 1p "$tmp/.out")
  if [ "$line1" = "$2" ]; then
    pass "$1"
  else
    fail "$1" "first line of stdout is '$line1', expected '$2'"
  fi
}

# The JSON checks, in one Python program: python3 -c "$json_py" MODE DOC ARG...
# It prints why a check failed and exits 1; it exits 0 when the check holds.
json_py='
import json, math, sys

def get(doc, path):
    """Follow PATH (a.b[2].c) into DOC; KeyError/IndexError when it is absent."""
    v = doc
    for part in path.split("."):
        name, _, rest = part.partition("[")
        if name:
            if not isinstance(v, dict) or name not in v:
                raise KeyError(path)
            v = v[name]
        for idx in filter(None, rest.replace("]", "").split("[")) if rest else []:
            if not isinstance(v, list) or int(idx) >= len(v):
                raise IndexError(path)
            v = v[int(idx)]
    return v

def load(path):
    with open(path) as f:
        return json.load(f)

def is_num(x):
    return isinstance(x, (int, float)) and not isinstance(x, bool)

mode, docpath = sys.argv[1], sys.argv[2]
try:
    d = load(docpath)
except ValueError as e:
    print("stdout is not one JSON document (%s)" % e)
    sys.exit(1)
if mode == "eq":
    path, want = sys.argv[3], json.loads(sys.argv[4])
    tol = float(sys.argv[5]) if len(sys.argv) > 5 else None
    try:
        got = get(d, path)
    except (KeyError, IndexError):
        print("%s is absent" % path)
        sys.exit(1)
    if tol is not None and is_num(got) and is_num(want):
        ok = abs(got - want) <= tol * max(1.0, abs(want))
    else:
        ok = json.dumps(got, sort_keys=True) == json.dumps(want, sort_keys=True)
    if not ok:
        print("%s is %s, expected %s%s" % (path, json.dumps(got), json.dumps(want),
                                            "" if tol is None else " within %g" % tol))
        sys.exit(1)
elif mode == "has":
    missing = []
    for path in sys.argv[3:]:
        try:
            get(d, path)
        except (KeyError, IndexError):
            missing.append(path)
    if missing:
        print("absent: " + ", ".join(missing))
        sys.exit(1)
elif mode == "py":
    try:
        ok = eval(sys.argv[3], {"d": d, "math": math, "load": load})
    except Exception as e:
        print("%s: %s" % (type(e).__name__, e))
        sys.exit(1)
    if not ok:
        print("false: " + sys.argv[3])
        sys.exit(1)
elif mode == "same":
    ref = load(sys.argv[3])
    a = [(repr(c["beta"]), repr(c["se"])) for c in d["coef"]]
    b = [(repr(c["beta"]), repr(c["se"])) for c in ref["coef"]]
    if a != b:
        print("coefficients %s differ from %s" % (a, b))
        sys.exit(1)
else:
    print("lib.sh: unknown mode " + mode)
    sys.exit(2)
'

json_check () {
  jc_name=$1
  shift
  if jc_msg=$(python3 -c "$json_py" "$@" 2>&1); then
    pass "$jc_name"
  else
    fail "$jc_name" "$jc_msg"
  fi
}

expect_json () {
  jn=$1
  shift
  json_check "$jn" eq "$tmp/.out" "$@"
}

expect_json_has () {
  jn=$1
  shift
  json_check "$jn" has "$tmp/.out" "$@"
}

expect_py () {
  json_check "$1" py "$tmp/.out" "$2"
}

expect_same_coef () {
  json_check "$1" same "$tmp/.out" "$2"
}

finish () {
  printf '%d passed, %d failed\n' "$npass" "$nfail"
  if [ "$nfail" -ne 0 ]; then
    exit 1
  fi
  exit 0
}
