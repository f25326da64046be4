#!/usr/bin/python3
"""nulls.py -- every null in a ballast JSON document has its reason (tests/cli/nulls.sh).

Usage: nulls.py FILE...  (a FILE ending in .json is a JSON document; any other is a text
report).  Prints one line per problem and exits 1 when there is any, else 0.

The rule checked (doc/json.md, "Null values"): a null at a path such as
coef[2].se or candidates[4].cv_rmse is explained when an object on the way to it (the
document itself included) has a "null_reasons" object holding, as a key, the rest of the
path from that object with the array indices left out ("se" in the coefficient's own
object, "coef.se" in the document's, "cv_rmse" in the candidate's) and a non-empty text as
its value.  That holds for every null, figures and the values of options not given (an
offset, prior weights, a transform) alike.  A text report (or a CSV, HTML page) must not
contain nan or inf as a word.
"""
import json, re, sys



def strip(path):
    """The path without its array indices: coef[2].se -> coef.se."""
    return ".".join(p for p in path if not isinstance(p, int))


def explained(stack, path):
    """True when an enclosing object's null_reasons names the rest of PATH."""
    for depth, obj in stack:
        reasons = obj.get("null_reasons") if isinstance(obj, dict) else None
        if not isinstance(reasons, dict):
            continue
        rest = path[depth:]
        for key in (strip(rest), ".".join(str(p) for p in rest)):
            r = reasons.get(key)
            if isinstance(r, str) and r.strip():
                return True
    return False


def walk(node, path, stack, problems, name):
    if isinstance(node, dict):
        stack = stack + [(len(path), node)]
        for k, v in node.items():
            if k == "null_reasons":
                continue
            walk(v, path + [k], stack, problems, name)
    elif isinstance(node, list):
        for i, v in enumerate(node):
            walk(v, path + [i], stack, problems, name)
    elif node is None:
        if not explained(stack, path):
            pretty = "".join("[%d]" % p if isinstance(p, int) else "." + p for p in path)
            problems.append("%s: %s is null without a reason" % (name, pretty.lstrip(".")))


WORD = re.compile(r"(?<![A-Za-z_])[-+]?(nan|inf|infinity)(?![A-Za-z_])", re.IGNORECASE)


def main():
    problems = []
    for name in sys.argv[1:]:
        with open(name) as f:
            text = f.read()
        if name.endswith(".json"):
            try:
                doc = json.loads(text)
            except ValueError as e:
                problems.append("%s: not JSON: %s" % (name, e))
                continue
            walk(doc, [], [], problems, name)
        else:
            for no, line in enumerate(text.splitlines(), 1):
                if WORD.search(line):
                    problems.append("%s:%d: non-finite number in the text: %s"
                                    % (name, no, line.strip()))
    for p in problems:
        print(p)
    sys.exit(1 if problems else 0)


if __name__ == "__main__":
    main()
