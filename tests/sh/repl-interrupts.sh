#!/bin/sh
# repl-interrupts.sh - Ctrl-C in the REPL (tmux) during a long d, a long
# claim, a check and a load: each time the computation stops with
# "error: interrupted", the prompt returns and a query shows the model intact
# (drift of S^n for dS = mu*S*dt + sigma*S*dW is (n*mu + n*(n-1)/2*sigma^2)*S^n
# by Ito's formula; common practice, no source).  The long computations: the
# differential of 900 nested sin (tens of seconds of work; its result is over the
# output budget, so nothing prints), and a check of 2*10^8 path steps of a costly
# expression (about 16 s).
# Skipped (77) when tmux is not installed.
set -u
command -v tmux >/dev/null 2>&1 || { echo "tmux not installed: skipped"; exit 77; }
ITOX=${ITOX:-./itox}
case $ITOX in /*) ;; *) ITOX=$(pwd)/$ITOX ;; esac
# ITOX_SLOW: how many times slower the program runs (50 under configure
# --enable-valgrind); the waits for the screen are scaled by it
slow=${ITOX_SLOW:-1}
work=$(mktemp -d)
sock="$work/tmux.sock"
export XDG_STATE_HOME="$work/state"
trap 'tmux -S "$sock" kill-server 2>/dev/null; rm -rf "$work"' EXIT
cd "$work" || exit 1
fail=0

screen() { tmux -S "$sock" capture-pane -t repl -p -J; }
keys() { tmux -S "$sock" send-keys -t repl "$@"; }
wait_for() { # TEXT [TENTHS]: wait until the screen shows TEXT (~10 s by default, times ITOX_SLOW)
	i=0
	while [ $i -lt $((${2:-100} * slow)) ]; do
		screen | grep -F -q -- "$1" && return 0
		sleep 0.1
		i=$((i + 1))
	done
	echo "timed out waiting for: $1"; screen | tail -5; return 1
}
expect() { # TEXT DESCRIPTION
	if wait_for "$1"; then echo "ok: $2"; else echo "FAILED: $2"; fail=1; fi
}
nested=$(awk 'BEGIN { for (i = 0; i < 900; i++) printf "sin("; printf "S"; for (i = 0; i < 900; i++) printf ")" }')
printf 'd %s\n' "$nested" >long.itox

# case NAME STATEMENT QUERY ANSWER: a fresh REPL with the model, STATEMENT,
# Ctrl-C about a second into it, then QUERY must print ANSWER, and Ctrl-D
# leaves with exit status 3, an interrupt's (the tmux command writes it; 99 is
# an error valgrind found, under configure --enable-valgrind).  The second counts from
# the moment the statement's end is on the screen: readline has read it all
# (under valgrind the model and the echo of a long line take seconds).
case_of() {
	name=$1 statement=$2 query=$3 answer=$4
	rm -f repl.status
	tmux -S "$sock" new-session -d -s repl -x 200 -y 50 "'$ITOX' --quiet; echo \$? >'$work/repl.status'"
	wait_for "itox>" || { fail=1; return; }
	keys 'param mu, sigma > 0' Enter 'noise W' Enter
	keys 'dS = mu*S*dt + sigma*S*dW' Enter 'assume S > 0' Enter
	keys "$statement" Enter
	wait_for "$(printf '%s' "$statement" | tail -c 10)" || fail=1
	sleep 1
	keys C-c
	expect 'error: interrupted' "Ctrl-C stops $name"
	keys "$query" Enter
	expect "$answer" "the model is intact after Ctrl-C during $name"
	keys C-d
	i=0
	while [ $i -lt $((100 * slow)) ] && [ ! -s repl.status ]; do sleep 0.1; i=$((i + 1)); done
	if [ "$(cat repl.status 2>/dev/null)" = 3 ]; then echo "ok: the REPL leaves with exit status 3 after $name"
	else echo "FAILED: exit status '$(cat repl.status 2>/dev/null)' after $name, expected 3"; fail=1; fi
	tmux -S "$sock" kill-server 2>/dev/null
	sleep 0.2
}
case_of "a long d" "d $nested" 'drift S^3' 'drift(S^3) = 3*(mu + sigma^2)*S^3'
case_of "a long claim" "claim d $nested = 0*dt" 'drift S^4' 'drift(S^4) = 2*(2*mu + 3*sigma^2)*S^4'
# The check must still run a second after it starts on an idle machine: d S^2
# took 0.74 s there (the test failed), this expression about 16 s.
case_of "a check" 'check d sin(S)*exp(cos(S)) + log(1 + S^2)*cosh(S) at S=1, mu=0.1, sigma=0.2 over steps=10000, paths=20000' \
	'drift S^5' 'drift(S^5) = 5*(mu + 2*sigma^2)*S^5'
case_of "a load" 'load "long.itox"' 'drift S^6' 'drift(S^6) = 3*(2*mu + 5*sigma^2)*S^6'
exit $fail
