#!/bin/sh
# command-line-order.sh - files and -e statements run in the order they are
# given on the command line, in one session (issue 14, item 5): an -e before
# a file declares what the file uses, an -e after a file sees what the file
# declared, and an error stops the run where it is, with the place of the
# input that failed (-e:N counts the -e statements only).
set -u
ITOX=${ITOX:-./itox}
case $ITOX in /*) ;; *) ITOX=$(pwd)/$ITOX ;; esac
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fail=0
cd "$work" || exit 1

printf 'log(exp(a))\n' >uses-a.itox
printf 'param b\n' >declares-b.itox

# check NAME WANT-STATUS WANT-STDOUT WANT-STDERR ARGS...
check() {
	name=$1 want_status=$2 want_out=$3 want_err=$4
	shift 4
	"$ITOX" "$@" >out.txt 2>err.txt
	status=$?
	got_out=$(cat out.txt) got_err=$(cat err.txt)
	if [ "$status" -ne "$want_status" ] || [ "$got_out" != "$want_out" ] || [ "$got_err" != "$want_err" ]; then
		echo "FAILED: $name (status $status, expected $want_status)"
		echo "  stdout: $got_out"
		echo "  expected: $want_out"
		echo "  stderr: $got_err"
		echo "  expected: $want_err"
		fail=1
	else
		echo "ok: $name"
	fi
}

check "-e before a file declares what the file uses" 0 "a" "" \
	-e 'param a' uses-a.itox
check "-e after a file sees what the file declared" 0 "1 + b" "" \
	declares-b.itox -e 'b + 1'
check "the order is kept across several of each" 0 "a
1 + a + b" "" \
	-e 'param a' uses-a.itox declares-b.itox -e 'a + b + 1'
check "a file after '--' runs after the options" 0 "a" "" \
	-e 'param a' -- uses-a.itox
check "a file before the -e that declares its name fails" 2 "" "uses-a.itox:1:9: error: unknown name 'a'
  log(exp(a))
          ^" \
	uses-a.itox -e 'param a'
check "an error stops the run: nothing after it runs" 2 "" "-e:2:1: error: unknown name 'c'
  c
  ^" \
	-e 'param a' -e 'c' uses-a.itox -e 'a'
exit $fail
