#!/bin/sh
# builtin-names.sh - the names of the built-in functions are reserved (issue
# 13, item 9): every declaration form refuses every one of them with exit
# status 2 and a suggestion, so that no declaration shadows a built-in (a
# `func sqrt(x)` was once accepted and then ignored: sqrt(4) still printed 2)
# and no built-in silently takes the place of a user's name.  The names come
# from the program itself (`help functions`), and that list is compared with
# the source (the EXPR_BUILTINS table in src/expr.h and the extra spellings in
# src/expr.c), so a built-in added to the table without a reserved name, or
# left out of the help, fails here.
set -u
ITOX=${ITOX:-./itox}
src=${ITOX_SRCDIR:-.}
fail=0
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

names=$("$ITOX" -e 'help functions' | head -n 1)
[ -n "$names" ] || { echo "FAILED: help functions lists no names"; exit 1; }
table=$(sed -n 's/^[[:space:]]*X([A-Z_]*, "\([A-Za-z]*\)",.*/\1/p' "$src/src/expr.h")
extra=$(sed -n 's/^static const char \*const extra_spellings\[\] = {\(.*\)};/\1/p' "$src/src/expr.c" |
	tr -d '",')
[ -n "$table" ] && [ -n "$extra" ] || { echo "FAILED: no built-in names found in the source"; exit 1; }
sorted() { printf '%s\n' $* | LC_ALL=C sort; }
if [ "$(sorted $names)" != "$(sorted $table $extra)" ]; then
	echo "FAILED: help functions lists '$names'; the source has '$(echo $table $extra)'"
	fail=1
fi

# FORM (NAME for the name) | the message after "error: " (N for the name)
forms=$(cat <<'FORMS'
param NAME|'N' is a built-in function; choose another name (such as 'N1')
param NAME in [0, 1]|'N' is a built-in function; choose another name (such as 'N1')
param a, NAME > 0|'N' is a built-in function; choose another name (such as 'N1')
noise NAME|'N' is a built-in function; choose another name (such as 'N1')
noise B, NAME|'N' is a built-in function; choose another name (such as 'N1')
func NAME(t, x)|'N' is a built-in function; choose another name (such as 'N1')
func f(t, NAME)|'N' is a built-in function; choose another argument name (such as 'N1')
let NAME = 1|'N' is a built-in function; choose another name (such as 'N1')
dNAME = dt|'N' is a built-in function; choose another name (such as 'N1')
dNAME = X*dW|'N' is a built-in function; choose another name (such as 'N1')
stratonovich dNAME = dt|'N' is a built-in function; choose another name (such as 'N1')
measure NAME: dW = dZ - dt|'N' is a built-in function; choose another name (such as 'N1')
measure Q: dW = dNAME - dt|'N' is a built-in function; name the new noise differently (such as 'N1')
state NAME = log(X) where X = exp(NAME)|'N' is a built-in function; choose another name (such as 'N1')
pde NAME(t, X)|'N' is a built-in function; choose another name (such as 'N1')
forward NAME(t, X)|'N' is a built-in function; choose another name (such as 'N1')
assume NAME > 0|'N' is a built-in function, not a variable (write N(x))
FORMS
)
n=0
for name in $names; do
	printf '%s\n' "$forms" | while IFS='|' read -r form message; do
		statement=$(printf '%s\n' "$form" | sed "s/NAME/$name/g")
		want=$(printf '%s\n' "$message" | sed "s/N/$name/g") # no message has another N
		"$ITOX" -e 'noise W' -e 'dX = X*dW' -e 'assume X > 0' -e "$statement" -e "$name(1)" \
			>"$work/out" 2>"$work/err"
		status=$?
		got=$(head -n 1 "$work/err" | sed 's/^-e:4:[0-9]*: error: //')
		if [ $status -ne 2 ] || [ "$got" != "$want" ] || [ -s "$work/out" ]; then
			echo "FAILED: $statement: status $status"
			echo "  got:      $(head -n 1 "$work/err")"
			echo "  expected: -e:4:COLUMN: error: $want"
			sed 's/^/  stdout: /' "$work/out"
			echo x >>"$work/failed"
		fi
	done
	n=$((n + 1))
done
[ -e "$work/failed" ] && fail=1
[ $fail -eq 0 ] && echo "builtin-names: $n names refused by $(printf '%s\n' "$forms" | wc -l) declaration forms"
exit $fail
