#!/bin/sh
# lists-complete.sh - tests/lists.am names every test file in the tree, so
# make check runs them and make dist ships them (run tests/update-lists).
set -u
src=${ITOX_SRCDIR:-.}
tmp=$(mktemp)
trap 'rm -f "$tmp"' EXIT
# a distribution tree has no .git: the lists were checked before it was made
cd "$src" || exit 1
sh tests/update-lists "$tmp" || exit 1
if diff -u tests/lists.am "$tmp"; then
	echo "test lists complete"
	exit 0
fi
echo "tests/lists.am is out of date: run tests/update-lists"
exit 1
