#!/bin/sh
# repl-tmux.sh - drive the REPL in a real terminal (tmux send-keys and
# capture-pane): declarations, a query, tab completion of a declared name, an
# error followed by a statement that still sees the earlier declarations, a
# multi-line statement, Ctrl-C abandoning a line, and history after a restart.
# Skipped (77) when tmux is not installed.
set -u
command -v tmux >/dev/null 2>&1 || { echo "tmux not installed: skipped"; exit 77; }
ITOX=${ITOX:-./itox}
work=$(mktemp -d)
sock="$work/tmux.sock"
export XDG_STATE_HOME="$work/state"
trap 'tmux -S "$sock" kill-server 2>/dev/null; rm -rf "$work"' EXIT
fail=0

screen() { tmux -S "$sock" capture-pane -t repl -p; }
keys() { tmux -S "$sock" send-keys -t repl "$@"; }
# wait until the screen contains a text (at most ~5 s)
wait_for() {
	i=0
	while [ $i -lt 50 ]; do
		screen | grep -F -q -- "$1" && return 0
		sleep 0.1
		i=$((i + 1))
	done
	echo "timed out waiting for: $1"; screen; return 1
}
expect() { # TEXT DESCRIPTION
	if wait_for "$1"; then echo "ok: $2"; else echo "FAILED: $2"; fail=1; fi
}
start() {
	tmux -S "$sock" new-session -d -s repl -x 160 -y 50 "$ITOX --quiet"
	wait_for "itox>" || { fail=1; }
}

start
keys 'param mu, sigma > 0' Enter 'noise W' Enter
keys 'dS = mu*S*dt + sigma*S*dW' Enter 'assume S > 0' Enter
keys 'd log(S)' Enter
expect 'd(log(S)) = (mu - 1/2*sigma^2)*dt + sigma*dW' "a query after declarations"
# tab completion of a declared name: "sig" + Tab completes to "sigma"
keys 'qv sig' Tab
sleep 0.3
keys '*S' Enter
expect 'sigma^4*S^2' "tab completion of a declared name (sigma*S has rate sigma^4*S^2)"
# an error, then a statement that still sees the model
keys 'sigam + 1' Enter
expect "did you mean 'sigma'?" "an error with a suggestion"
keys 'drift S' Enter
expect 'mu*S' "the session survives the error"
# a multi-line statement: an open parenthesis continues the line
keys 'd log(' Enter
expect '  ...' "a continuation prompt"
keys 'S^2)' Enter
expect 'd(2*log(S)) = (2*mu - sigma^2)*dt + 2*sigma*dW' "a multi-line statement"
# Ctrl-C abandons the current line
keys 'this line is abandoned' C-c
sleep 0.3
keys 'generator S^2' Enter
expect '(2*mu + sigma^2)*S^2' "Ctrl-C abandons the line and the prompt returns"
if screen | grep -F -q "this line is abandonedgenerator"; then echo "FAILED: Ctrl-C kept the line"; fail=1; fi
# Ctrl-D leaves; history is kept across a restart
keys C-d
sleep 0.5
tmux -S "$sock" kill-server 2>/dev/null
if grep -F -q 'generator S^2' "$XDG_STATE_HOME/itox/history"; then
	echo "ok: history file written"
else
	echo "FAILED: history file"; fail=1
fi
start
keys Up
expect 'itox> generator S^2' "history available after a restart"
tmux -S "$sock" kill-server 2>/dev/null
exit $fail
