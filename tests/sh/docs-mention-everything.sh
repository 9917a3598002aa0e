#!/bin/sh
# docs-mention-everything.sh - --help mentions every command-line option, and
# the man page and `help` mention every reserved word of the grammar.
set -u
ITOX=${ITOX:-./itox}
src=${ITOX_SRCDIR:-.}
fail=0
help_text=$("$ITOX" --help) || { echo "itox --help: exit status $?"; fail=1; }
for option in -e --format --seed --time-limit --memory-limit --output-limit --quiet --help --version; do
	printf '%s\n' "$help_text" | grep -q -- "$option" || { echo "--help does not mention $option"; fail=1; }
done
# the reserved words, from the grammar's single keyword list
words=$(grep -o 'X([a-z]*, [A-Z_]*)' "$src/grammar/itox.y" | sed 's/X(\([a-z]*\),.*/\1/')
[ -n "$words" ] || { echo "no keywords found in grammar/itox.y"; exit 1; }
man_text=$(sed 's/\\f[BIR]//g; s/\\-/-/g' "$src/src/itox.1")
overview=$("$ITOX" -e help) || { echo "itox -e help: exit status $?"; fail=1; }
for word in $words; do
	printf '%s\n' "$man_text" | grep -q -w -- "$word" || { echo "the man page does not mention '$word'"; fail=1; }
	printf '%s\n' "$overview" | grep -q -w -- "$word" || "$ITOX" -e "help $word" >/dev/null 2>&1 ||
		{ echo "help does not cover '$word'"; fail=1; }
done
[ $fail -eq 0 ] && echo "every option and statement is documented"
exit $fail
