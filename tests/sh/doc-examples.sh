#!/bin/sh
# doc-examples.sh - the documentation's examples run: the README tour gives
# exactly the output it shows, and every "example:" of help runs (alone, or
# after a small model when it queries one).
set -u
ITOX=${ITOX:-./itox}
src=${ITOX_SRCDIR:-.}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fail=0

# 1. the README tour: "itox> STATEMENT" lines, each followed by its output
awk '/^\$ \.\/itox$/ { on = 1; next } on && /^```/ { exit } on' "$src/README.md" > "$work/tour.txt"
sed -n 's/^itox> //p' "$work/tour.txt" > "$work/tour.itox"
grep -v '^itox> ' "$work/tour.txt" > "$work/expected.txt"
[ -s "$work/tour.itox" ] || { echo "no tour found in README.md"; exit 1; }
# run as a file named repl from its folder: the REPL's places read repl:N for
# its N-th entry, and the tour has one entry per line
cp "$work/tour.itox" "$work/repl"
(cd "$work" && "$ITOX" repl) > "$work/actual.txt" 2>&1
status=$?
# the tour contains one failing claim on purpose
if [ $status -ne 1 ] || ! diff -u "$work/expected.txt" "$work/actual.txt"; then
	echo "FAILED: the README tour (status $status)"; fail=1
else
	echo "ok: README tour"
fi

# 2. help examples
cat > "$work/params.itox" <<'MODEL'
param mu, sigma, r, lambda, a, b > 0
param rho in [-1, 1]
noise W, B
MODEL
cat > "$work/model.itox" <<'MODEL'
load params.itox
dS = mu*S*dt + sigma*S*dW
assume S > 0
stratonovich dX = a*X*dt + b*X*dB
measure Q: dW = dZ - lambda*dt
func f(t, y)
MODEL
# attempt ARGS...: run an example in the work folder; an error is expected
# when it needs a model, but exit status 99 is valgrind's (configure
# --enable-valgrind: a memory error or a definite leak) and fails the test
attempt() {
	(cd "$work" && "$ITOX" "$@" > /dev/null 2>"$work/err")
	status=$?
	[ $status -eq 99 ] && { echo "FAILED: valgrind (exit status 99): itox $*"; cat "$work/err"; fail=1; }
	return $status
}
topics=$(sed -n 's/^[[:space:]]*X("\([a-z]*\)",.*/\1/p' "$src/src/help.c")
n=0
for topic in $topics; do
	example=$("$ITOX" -e "help $topic" | sed -n 's/.*example:  //p')
	[ -n "$example" ] || { echo "FAILED: help $topic has no example"; fail=1; continue; }
	n=$((n + 1))
	attempt -e "$example" && continue
	attempt params.itox -e "$example" && continue
	attempt model.itox -e "$example" && continue
	echo "FAILED: help $topic example: $example"; cat "$work/err"; fail=1
done
echo "ran $n help examples"
exit $fail
