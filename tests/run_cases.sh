#!/bin/sh
# The catalogue of problem files: runs lopside on every case and checks the result.
#
#   tests/cases/bad/NAME.ini    a problem with one thing wrong; the first line of
#                               NAME.expect is a fragment the error must contain
#                               (fixed string, with the line number: `:14: [...] key: ...`)
#   tests/cases/good/NAME.ini   a valid problem; NAME.expect holds `path = value` lines
#                               checked against the JSON (indices from 0, as in JSON;
#                               numbers within 1e-9 + 1e-8 * |value|)
#
# A bad case must exit 2 from both `run FILE --json OUT` and `check FILE`, print one
# line `lopside: FILE...` on stderr and nothing on stdout, and write no file at all.
# Each command runs in an empty working folder with the problem file alone in a
# folder of its own, so stray output next to the file is caught too.
# Every bad case is also run with CRLF line endings (its line numbers must not move),
# every good case with CRLF and with a UTF-8 byte order mark. Cases a text file should
# not hold (binary bytes, over-long lines) are generated below, and so are the
# command-line misuses (a misspelt option or command) with the message each must give.
#
# Usage, from the repository root: LOPSIDE=build/lopside sh tests/run_cases.sh
# Prints `ok NAME` or `FAIL NAME: why` per case and ends with `N passed, M failed`.
set -u
export LC_ALL=C
PY=${PYTHON:-/usr/bin/python3}
CASES=tests/cases
HERE=$(pwd)

if [ -z "${LOPSIDE:-}" ]; then
    echo "FAIL setup: set LOPSIDE to the lopside binary"
    echo "0 passed, 1 failed"
    exit 1
fi
case $LOPSIDE in
    /*) ;;
    */*) LOPSIDE=$HERE/$LOPSIDE ;;
    *) LOPSIDE=$(command -v "$LOPSIDE" || echo "$LOPSIDE") ;;
esac
if [ ! -x "$LOPSIDE" ]; then
    echo "FAIL setup: $LOPSIDE is not an executable"
    echo "0 passed, 1 failed"
    exit 1
fi

TOP=$(mktemp -d "${TMPDIR:-/tmp}/lopside-cases.XXXXXX") || exit 1
trap 'rm -rf "$TOP"' EXIT
trap 'exit 130' INT TERM

passed=0
failed=0
why=""

note() {
    why="${why:+$why; }$1"
}

report() {
    if [ -z "$why" ]; then
        echo "ok $1"
        passed=$((passed + 1))
    else
        echo "FAIL $1: $why"
        failed=$((failed + 1))
    fi
    why=""
}

# new_case ID NAME: makes $TOP/ID/in (for NAME.ini) and $TOP/ID/work; sets DIR, FILE.
new_case() {
    DIR=$TOP/$1
    FILE=$DIR/in/$2.ini
    mkdir -p "$DIR/in" "$DIR/work"
}

# run_lopside ARGS...: runs lopside in $DIR/work; output in $DIR/out, $DIR/err; sets RC.
run_lopside() {
    cd "$DIR/work" || exit 1
    # The braces keep the shell's own note of a crash out of this script's output.
    { "$LOPSIDE" "$@" >"$DIR/out" 2>"$DIR/err"; } 2>/dev/null
    RC=$?
    cd "$HERE" || exit 1
}

# err_line: the first line of stderr, the problem file named without its folder.
err_line() {
    line=$(head -n 1 "$DIR/err")
    case $line in
        "lopside: $FILE"*) line="lopside: ${FILE##*/}${line#"lopside: $FILE"}" ;;
    esac
    printf '%s\n' "$line"
}

# exit_status CMD: notes a crash; returns 0 when lopside ended by itself.
exit_status() {
    if [ "$RC" -gt 128 ]; then
        note "$1: killed by signal $((RC - 128))"
        return 1
    fi
    return 0
}

# folder_listing FOLDER: the names in FOLDER on one line.
folder_listing() {
    ls -A "$1" | tr '\n' ' ' | sed 's/ $//'
}

# check_nothing_written CMD [ALLOWED]: the working folder holds only ALLOWED (or
# nothing) and the problem file's folder only the problem file.
check_nothing_written() {
    left=$(folder_listing "$DIR/work")
    [ "$left" = "${2:-}" ] || note "$1: the working folder holds '$left', expected '${2:-}'"
    beside=$(folder_listing "$DIR/in")
    [ "$beside" = "${FILE##*/}" ] || note "$1: the problem's folder holds '$beside'"
}

# check_bad ID FRAGMENT: the problem file $FILE is in place.
check_bad() {
    frag=$2
    for cmd in run check; do
        if [ "$cmd" = run ]; then
            run_lopside run "$FILE" --json "$DIR/work/out.json"
        else
            run_lopside check "$FILE"
        fi
        exit_status "$cmd" || continue
        [ "$RC" -eq 2 ] || note "$cmd: exit $RC, expected 2"
        lines=$(awk 'END { print NR }' "$DIR/err")
        newlines=$(wc -l <"$DIR/err" | tr -d ' ')
        if [ "$lines" != 1 ] || [ "$newlines" != 1 ]; then
            note "$cmd: stderr holds $lines lines, expected one"
        fi
        first=$(head -n 1 "$DIR/err")
        case $first in
            "lopside: $FILE"*) ;;
            *) note "$cmd: stderr does not start with 'lopside: FILE'" ;;
        esac
        grep -qF -e "$frag" "$DIR/err" ||
            note "$cmd: expected '$frag', got '${first#"lopside: $FILE"}'"
        [ -s "$DIR/out" ] && note "$cmd: printed to stdout"
        check_nothing_written "$cmd"
    done
    report "$1"
}

# compare_json JSON EXPECT: prints one line per mismatch.
compare_json() {
    "$PY" - "$1" "$2" <<'EOF'
import json, re, sys

with open(sys.argv[1]) as f:
    doc = json.load(f)
with open(sys.argv[2]) as f:
    lines = f.read().splitlines()

def number(text):
    try:
        return float(text)
    except ValueError:
        return None

for line in lines:
    line = line.strip()
    if not line or line.startswith("#"):
        continue
    path, _, want = (part.strip() for part in line.partition("="))
    node = doc
    try:
        for name, index in re.findall(r"([^.\[\]]+)|\[(\d+)\]", path):
            node = node[int(index)] if index else node[name]
    except (KeyError, IndexError, TypeError):
        print(f"{path}: missing")
        continue
    expected = number(want)
    if expected is not None and isinstance(node, (int, float)) and not isinstance(node, bool):
        if abs(node - expected) > 1e-9 + 1e-8 * abs(expected):
            print(f"{path} = {node!r}, expected {want}")
    elif expected is not None or not isinstance(node, str) or node != want:
        print(f"{path} = {json.dumps(node)}, expected {want}")
EOF
}

# check_good ID EXPECT: the problem file $FILE is in place.
check_good() {
    run_lopside run "$FILE" --json "$DIR/work/out.json"
    if exit_status run; then
        if [ "$RC" -ne 0 ]; then
            note "run: exit $RC: $(err_line)"
        else
            [ -s "$DIR/err" ] && note "run: wrote to stderr: $(err_line)"
            check_nothing_written run out.json
            if [ -f "$DIR/work/out.json" ]; then
                mismatches=$(compare_json "$DIR/work/out.json" "$2" 2>&1 |
                    tr '\n' ';' | sed 's/;$//; s/;/; /g')
                [ -z "$mismatches" ] || note "$mismatches"
            fi
        fi
    fi
    run_lopside check "$FILE"
    if exit_status check; then
        if [ "$RC" -ne 0 ]; then
            note "check: exit $RC: $(err_line)"
        elif [ -s "$DIR/err" ]; then
            note "check: wrote to stderr: $(err_line)"
        fi
        check_nothing_written check "$(folder_listing "$DIR/work")"
    fi
    report "$1"
}

to_crlf() {
    awk '{ printf "%s\r\n", $0 }' "$1"
}

with_bom() {
    printf '\357\273\277'
    cat "$1"
}

# after_line1 SRC FORMAT [ARG]: SRC with the printf-formatted line inserted as line 2.
after_line1() {
    src=$1
    shift
    head -n 1 "$src"
    # shellcheck disable=SC2059
    printf "$@"
    tail -n +2 "$src"
}

# repeat_to TEXT LENGTH: TEXT repeated and cut to LENGTH characters.
repeat_to() {
    awk -v t="$1" -v n="$2" 'BEGIN { s = t; while (length(s) < n) s = s t; print substr(s, 1, n) }'
}

# ---- the files in tests/cases
for ini in "$CASES"/bad/*.ini; do
    name=${ini##*/}
    name=${name%.ini}
    if [ ! -f "$CASES/bad/$name.expect" ]; then
        echo "FAIL $name: no $name.expect"
        failed=$((failed + 1))
        continue
    fi
    frag=$(head -n 1 "$CASES/bad/$name.expect")
    new_case "$name" "$name"
    cp "$ini" "$FILE"
    check_bad "$name" "$frag"
    new_case "$name+crlf" "$name"
    to_crlf "$ini" >"$FILE"
    check_bad "$name+crlf" "$frag"
done

for ini in "$CASES"/good/*.ini; do
    name=${ini##*/}
    name=${name%.ini}
    expect=$HERE/$CASES/good/$name.expect
    if [ ! -f "$expect" ]; then
        echo "FAIL $name: no $name.expect"
        failed=$((failed + 1))
        continue
    fi
    new_case "$name" "$name"
    cp "$ini" "$FILE"
    check_good "$name" "$expect"
    new_case "$name+crlf" "$name"
    to_crlf "$ini" >"$FILE"
    check_good "$name+crlf" "$expect"
    new_case "$name+bom" "$name"
    with_bom "$ini" >"$FILE"
    check_good "$name+bom" "$expect"
done

# ---- generated cases, built on a good problem whose line 1 is `[problem]`
base=$CASES/good/interval_timing_values.ini
base_expect=$HERE/$CASES/good/interval_timing_values.expect

# A NUL byte inside a value.
new_case gen_nul_byte nul_byte
after_line1 "$base" 'notes = tone\000detection\n' >"$FILE"
check_bad gen_nul_byte ':2: holds a NUL byte'

# Latin-1 text (0xB0 is the degree sign there), not UTF-8.
new_case gen_latin1 latin1
after_line1 "$base" 'notes = room at 21 \260C\n' >"$FILE"
check_bad gen_latin1 ':2: is not valid UTF-8'

# An image given for a problem file: the PNG signature, then 600 bytes from a
# fixed linear congruential sequence (x = 75 x + 74 mod 65537).
new_case gen_binary_image image
{
    printf '\211PNG\r\n\032\n'
    # The format is nothing but octal escapes, one per byte.
    # shellcheck disable=SC2059
    printf "$(awk 'BEGIN { x = 2024; for (i = 0; i < 600; i++) {
        x = (75 * x + 74) % 65537; printf "\\%03o", x % 256 } }')"
} >"$FILE"
check_bad gen_binary_image ':1: is not valid UTF-8'

# A 10,000-character line, and the limit of the INI reader: 198 characters pass, 199 fail.
for n in 10000 199; do
    new_case "gen_line_$n" "line_$n"
    after_line1 "$base" '%s\n' "$(repeat_to "notes = pacing study, block A. " "$n")" >"$FILE"
    check_bad "gen_line_$n" ":2: line is $n characters long"
done
new_case gen_line_198 line_198
after_line1 "$base" '%s\n' "$(repeat_to "notes = pacing study, block A. " 198)" >"$FILE"
check_good gen_line_198 "$base_expect"
new_case gen_line_198+crlf line_198
after_line1 "$base" '%s\n' "$(repeat_to "notes = pacing study, block A. " 198)" >"$DIR/text"
to_crlf "$DIR/text" >"$FILE"
rm -f "$DIR/text"
check_good gen_line_198+crlf "$base_expect"

# A comment line is not a value line: its length is free.
new_case gen_long_comment long_comment
after_line1 "$base" '; %s\n' "$(repeat_to "Session notes from the pacing pilot. " 1000)" >"$FILE"
check_good gen_long_comment "$base_expect"

# ---- the command line: misuse exits 2, writes nothing, and names the nearest option or
# command. ARGS may hold FILE, replaced by a valid problem; the first stderr line must
# contain FRAGMENT.
# check_usage ID FRAGMENT ARGS...
check_usage() {
    id=$1
    frag=$2
    shift 2
    new_case "$id" "$id"
    cp "$base" "$FILE"
    n=$#
    for a in "$@"; do
        [ "$a" = FILE ] && a=$FILE
        set -- "$@" "$a"
    done
    shift "$n"
    run_lopside "$@"
    if exit_status usage; then
        [ "$RC" -eq 2 ] || note "exit $RC, expected 2"
        line=$(head -n 1 "$DIR/err")
        case $line in
            *"$frag"*) ;;
            *) note "expected '$frag', got '$line'" ;;
        esac
        [ -s "$DIR/out" ] && note "printed to stdout"
        check_nothing_written usage
    fi
    report "$id"
}

check_usage usage_option_misspelt 'lopside: unknown option --jsn; did you mean --json?' \
    run FILE --jsn out.json
check_usage usage_option_misspelt_value 'lopside: unknown option --workbok; did you mean --workbook?' \
    run FILE --workbok=out.xlsx
check_usage usage_option_no_value 'lopside: option --csv needs a value' run FILE --csv
check_usage usage_option_given_value 'lopside: option --quiet takes no value' run FILE --quiet=yes
check_usage usage_option_far 'lopside: unknown option --zzzzzz' run FILE --zzzzzz
check_usage usage_print_not_demo 'lopside: option --print belongs to `lopside demo`' \
    run FILE --print
check_usage usage_demo_option_misspelt 'lopside: unknown option --prnt; did you mean --print?' \
    demo --prnt
check_usage usage_command_misspelt 'lopside: unknown command `chekc`; did you mean `check`?' \
    chekc FILE

echo "$passed passed, $failed failed"
[ "$failed" -eq 0 ]
