#!/bin/sh
# whole-script-outputs.sh - every example, and every script test that runs
# without an error, written whole in the two document formats:
#  - --format=c: one C99 translation unit that compiles with
#    cc -std=c99 -Wall -Wextra -Werror -c (unused parameters allowed: every
#    function takes all of the model's names);
#  - --format=latex --standalone: one document that pdflatex compiles (skipped
#    when pdflatex is not installed, as the rest of the test still runs).
# Common practice, no source: these check that the writers produce what the
# formats' tools accept; the numbers are checked by tests/ref/c_output_compiles.py
# and tests/ref/print_roundtrip.py.
set -u
ITOX=${ITOX:-./itox}
src=${ITOX_SRCDIR:-.}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
have_latex=1
command -v pdflatex >/dev/null 2>&1 || have_latex=0
fail=0 units=0 docs=0
for f in "$src"/examples/*.itox "$src"/tests/scripts/*.itox; do
	base=${f%.itox}
	name=$(basename "$base")
	# scripts that are about errors, limits, other formats or the session are not documents
	[ -f "$base.status" ] && continue
	[ -f "$base.args" ] && continue
	case $name in help | save-load | load-saved | show) continue ;; esac
	grep -q "^format " "$f" && continue
	dir=$(dirname "$f")
	if (cd "$dir" && "$ITOX" --format=c "$name.itox") > "$work/$name.c" 2> "$work/$name.err"; then :; else
		echo "FAIL: $name: itox --format=c exited $?"; cat "$work/$name.err"; fail=1; continue
	fi
	[ -s "$work/$name.c" ] || continue
	if ! cc -std=c99 -Wall -Wextra -Wno-unused-parameter -Werror -c "$work/$name.c" -o "$work/$name.o" 2> "$work/$name.cc"; then
		echo "FAIL: $name: the C unit does not compile"; head -20 "$work/$name.cc"; fail=1
	fi
	units=$((units + 1))
	[ $have_latex = 1 ] || continue
	if (cd "$dir" && "$ITOX" --format=latex --standalone "$name.itox") > "$work/$name.tex" 2> "$work/$name.err"; then :; else
		echo "FAIL: $name: itox --format=latex --standalone exited $?"; cat "$work/$name.err"; fail=1; continue
	fi
	if ! (cd "$work" && pdflatex -interaction=nonstopmode -halt-on-error "$name.tex" > "$name.latexlog" 2>&1); then
		echo "FAIL: $name: the standalone LaTeX does not compile"; grep -A3 '^!' "$work/$name.latexlog" | head; fail=1
	fi
	docs=$((docs + 1))
done
echo "$units C units compiled, $docs standalone documents compiled"
[ $units -gt 10 ] || { echo "FAIL: too few units"; fail=1; }
exit $fail
