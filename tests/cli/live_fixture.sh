# Sourced by the cli_*_live.sh tests (not a test itself): reruns a fixture
# generator and compares its output with the committed fixture, which catches
# a fixture edited by hand, a generator changed without regenerating, or a
# SciPy/NumPy whose results moved.  The line naming the library versions is
# left out of the comparison: another version alone is not a failure, changed
# numbers are.
#
# The generators run with /usr/bin/python3 (scripts/deps installs SciPy and
# NumPy for it); CP_TEST_PYTHON names another interpreter, which is how the
# skip path is tried (CP_TEST_PYTHON=/nonexistent ctest -R _live).  Without
# the interpreter or its modules the test exits 77: CTest reports it skipped.

# live_require_python MODULES: sets py to the interpreter, or exits 77 (the
# test is skipped, never passed) when it or one of MODULES is missing.
live_require_python() {
    py=${CP_TEST_PYTHON:-/usr/bin/python3}
    if ! [ -x "$py" ] || ! "$py" -c "import $1" 2>/dev/null; then
        echo "SKIP: $py with $1 is not present"
        exit 77
    fi
}

# live_fixture SRCDIR GENERATOR FIXTURE MODULES VERSION_LINE_REGEX COUNT_REGEX
#   GENERATOR, FIXTURE: paths below SRCDIR; MODULES: what the generator imports
#   ("scipy.stats, numpy"); VERSION_LINE_REGEX: the line naming the versions;
#   COUNT_REGEX: the lines counted in the OK message (one per fixture case).
live_fixture() {
    local src=$1 gen=$2 fixture=$3 modules=$4 version_line=$5 count=$6
    live_require_python "$modules"
    live_tmp=$(mktemp -d) || exit 1
    trap 'rm -rf "$live_tmp"' EXIT
    local fresh="$live_tmp/$(basename "$fixture")"
    if ! "$py" "$src/$gen" "$fresh" 2>"$live_tmp/stderr"; then
        echo "FAIL: $gen did not run:" >&2
        head -20 "$live_tmp/stderr" >&2
        exit 1
    fi
    if ! diff <(grep -v "$version_line" "$src/$fixture") <(grep -v "$version_line" "$fresh") \
            >"$live_tmp/diff"; then
        echo "FAIL: $fixture differs from a fresh run of $gen:" >&2
        head -20 "$live_tmp/diff" >&2
        exit 1
    fi
    echo "OK: $(grep -c "$count" "$fresh") cases of $fixture match a fresh run" \
         "($(grep -m1 "$version_line" "$fresh"))"
}
