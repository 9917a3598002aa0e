#!/bin/sh
# save-load-examples.sh - save writes a script that, loaded into a fresh
# session, reproduces the session exactly: for every example, the model saved
# after running it, loaded again and saved again, is the same text, and a set
# of queries gives the same answers in both sessions.
set -u
ITOX=${ITOX:-./itox}
src=${ITOX_SRCDIR:-.}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fail=0
count=0
# vg_status STATUS WHAT: itox exits with 0 to 3 (LANGUAGE.md); anything else
# fails the test: 99 is valgrind's (configure --enable-valgrind: a memory
# error or a definite leak), over 128 a signal
vg_status() {
	[ "$1" -le 3 ] && return 0
	echo "FAILED: $2: exit status $1"; fail=1; return 1
}
for example in "$src"/examples/*.itox; do
	name=$(basename "$example" .itox)
	cp "$example" "$work/$name.itox"
	# run the example (its own exit status may be 1: a wrong claim on purpose)
	(cd "$work" && "$ITOX" -e "load $name.itox" -e "save $name.saved" > /dev/null 2>"$work/$name.err")
	vg_status $? "$name: load and save" || continue
	if [ ! -s "$work/$name.saved" ]; then
		echo "FAILED: $name: nothing saved"; fail=1; continue
	fi
	(cd "$work" && "$ITOX" -e "load $name.saved" -e "save $name.again" > "$work/$name.load.out" 2>&1) ||
		{ echo "FAILED: $name: the saved script does not load"; cat "$work/$name.load.out"; fail=1; continue; }
	if ! diff -u "$work/$name.saved" "$work/$name.again"; then
		echo "FAILED: $name: save after load differs"; fail=1; continue
	fi
	# the same answers: show, and the SDE of every state in both conventions
	states=$(sed -n 's/^\(stratonovich \)\{0,1\}d\([A-Za-z][A-Za-z0-9_]*\) = .*/\2/p' "$work/$name.saved")
	queries="-e 'format text' -e show"
	for x in $states; do queries="$queries -e 'sde $x' -e 'sde $x stratonovich'"; done
	(cd "$work" && eval "\"$ITOX\" -e 'load $name.saved' $queries" > "$work/$name.b" 2>&1)
	vg_status $? "$name: the saved script's answers" || continue
	(cd "$work" && eval "\"$ITOX\" -e 'load $name.again' $queries" > "$work/$name.c" 2>&1)
	vg_status $? "$name: the second round trip's answers" || continue
	if ! diff -u "$work/$name.b" "$work/$name.c"; then
		echo "FAILED: $name: answers differ after a second round trip"; fail=1; continue
	fi
	# and the same answers as the original session (its output ends with them)
	lines=$(wc -l < "$work/$name.b")
	(cd "$work" && eval "\"$ITOX\" -e 'load $name.itox' $queries" > "$work/$name.all" 2>"$work/$name.err")
	vg_status $? "$name: the original's answers" || continue
	tail -n "$lines" "$work/$name.all" > "$work/$name.a"
	if ! diff -u "$work/$name.a" "$work/$name.b"; then
		echo "FAILED: $name: the loaded model answers differently from the original"; fail=1; continue
	fi
	count=$((count + 1))
done
echo "$count examples survive save and load"
[ $count -gt 0 ] || fail=1
exit $fail
