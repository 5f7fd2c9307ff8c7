#!/usr/bin/env bash
# Tuning tables against docs/table.schema.json: the committed version-2 fixtures and a
# table freshly written by the writer (through test_table --write-sample) must
# validate, and a table with a wrong field must not.  The validator is
# python3-jsonschema (Debian), run by /usr/bin/python3.
set -euo pipefail
CLI="$1"; SRC="$2"
PY=/usr/bin/python3
BUILD="$(cd "$(dirname "$CLI")" && pwd)"
tmp="$(mktemp -d)"; trap 'rm -rf "$tmp"' EXIT
$PY -c 'import jsonschema' 2>/dev/null || { echo "FAIL: python3-jsonschema is not installed (apt-get install python3-jsonschema)"; exit 1; }

"$BUILD/tests/test_table" --write-sample "$tmp/fresh.json"

validate() {
  $PY - "$SRC/docs/table.schema.json" "$@" <<'PY'
import json, sys, jsonschema
schema = json.load(open(sys.argv[1]))
jsonschema.Draft202012Validator.check_schema(schema)
v = jsonschema.Draft202012Validator(schema)
bad = 0
for path in sys.argv[2:]:
    errs = sorted(v.iter_errors(json.load(open(path))), key=lambda e: list(e.path))
    for e in errs[:5]:
        print(f"{path}: {'/'.join(map(str, e.path))}: {e.message}")
    bad += bool(errs)
sys.exit(1 if bad else 0)
PY
}

# Version-2 fixtures only: *.v1.* are the old-version originals the migration
# test reads (the schema describes version 2).
current=()
for f in "$SRC"/tests/data/*.table.json; do case "$f" in *.v1.*) ;; *) current+=("$f") ;; esac; done
validate "${current[@]}" "$tmp/fresh.json" || { echo "FAIL: a table does not match the schema"; exit 1; }

# The schema must be able to fail: a string where an integer belongs.
$PY -c '
import json, sys
d = json.load(open(sys.argv[1])); d["entries"][0]["shape"]["k"] = "8"
json.dump(d, open(sys.argv[2], "w"))' "$tmp/fresh.json" "$tmp/broken.json"
if validate "$tmp/broken.json" >"$tmp/out"; then echo "FAIL: schema accepted shape.k as a string"; exit 1; fi
grep -q "entries/0/shape/k" "$tmp/out" || { echo "FAIL: schema error does not name the field"; cat "$tmp/out"; exit 1; }

# The loader reads what the schema accepts.
"$CLI" lookup "$tmp/fresh.json" --shape n=1,c=4,h=10,w=10,k=8,r=3,pad=1 --strict-device >"$tmp/l.txt"
grep -q "match: *exact" "$tmp/l.txt" || { echo "FAIL: lookup on the fresh table"; cat "$tmp/l.txt"; exit 1; }
echo "cli_schema: all checks passed"
