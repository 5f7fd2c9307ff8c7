# Shared by the shell tests that source it (not a test itself: CTest runs
# cli_*.sh only).  The caller sets T (a scratch directory) and CLI.
#   die MESSAGE                       counts a failure
#   expect CODE FRAGMENT -- command   exit status CODE and FRAGMENT as the one
#                                     line on stderr (or on stdout when
#                                     FRAGMENT starts with 'stdout:')

fails=0
die() { echo "FAIL: $*" >&2; fails=$((fails + 1)); }

expect() {
    local code=$1 frag=$2
    shift 3
    local rc=0
    "$@" >"$T/out" 2>"$T/err" || rc=$?
    if [[ $rc -ne $code ]]; then
        die "'$*' exited $rc, expected $code; stderr: $(cat "$T/err")"
        return 0
    fi
    if [[ $frag == stdout:* ]]; then
        grep -qF -- "${frag#stdout:}" "$T/out" || die "'$*': stdout lacks '${frag#stdout:}'"
    elif [[ -n $frag ]]; then
        grep -qF -- "$frag" "$T/err" || die "'$*': stderr '$(cat "$T/err")' lacks '$frag'"
        [[ $(wc -l <"$T/err") -eq 1 ]] || die "'$*': stderr is not one line: $(cat "$T/err")"
    fi
}
