#!/bin/sh
# repl-tmux.sh - drive the REPL in a real terminal (tmux send-keys and
# capture-pane): declarations, a query, tab completion of a declared name, an
# error followed by a statement that still sees the earlier declarations, a
# multi-line statement, Ctrl-C abandoning a line, and history after a restart.
# Then correcting a declaration (issue 14, item 4) and statements that apply
# whole or not at all (item 2):
#   - declaring a state's SDE, a parameter's domain, a correlation, a let or
#     a measure again replaces the old one and one line says so; results
#     printed before stay on the screen as they were;
#   - forget NAME removes an unused declaration, or says what uses it;
#   - a failed declaration and a failed load leave the model as it was.
# The expected differentials are Ito's formula for log(S) with dS = a*S*dt +
# b*S*dW: (a - b^2/2)*dt + b*dW (common practice, no source).
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
fail=0

screen() { tmux -S "$sock" capture-pane -t repl -p -S -200; }
keys() { tmux -S "$sock" send-keys -t repl "$@"; }
# wait until the screen contains a text (at most ~5 s, times ITOX_SLOW)
wait_for() {
	i=0
	while [ $i -lt $((50 * slow)) ]; do
		screen | grep -F -q -- "$1" && return 0
		sleep 0.1
		i=$((i + 1))
	done
	echo "timed out waiting for: $1"; screen; return 1
}
expect() { # TEXT DESCRIPTION
	if wait_for "$1"; then echo "ok: $2"; else echo "FAILED: $2"; fail=1; fi
}
# the tmux command writes the REPL's exit status when it leaves (99 is an
# error valgrind found, under configure --enable-valgrind)
start() {
	rm -f "$work/repl.status"
	tmux -S "$sock" new-session -d -s repl -x 160 -y 50 "'$ITOX' --quiet; echo \$? >'$work/repl.status'"
	wait_for "itox>" || { fail=1; }
}
# left STATUS DESCRIPTION: wait for the REPL to leave; its exit status is the
# worst of its statements' (LANGUAGE.md: 2 after an error)
left() {
	i=0
	while [ $i -lt $((50 * slow)) ] && [ ! -s "$work/repl.status" ]; do sleep 0.1; i=$((i + 1)); done
	if [ "$(cat "$work/repl.status" 2>/dev/null)" = "$1" ]; then echo "ok: $2 (exit status $1)"
	else echo "FAILED: $2: exit status '$(cat "$work/repl.status" 2>/dev/null)', expected $1"; fail=1; fi
}
# clear the screen and its history, so the next expect sees only new text:
# the history is cleared only once the redraw has happened (tmux moves a
# cleared screen into the history, so clearing it first raced with readline)
fresh() {
	keys C-l
	i=0
	while [ $i -lt $((50 * slow)) ] && [ "$(tmux -S "$sock" capture-pane -t repl -p | grep -c .)" -gt 1 ]; do
		sleep 0.1
		i=$((i + 1))
	done
	tmux -S "$sock" clear-history -t repl
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
left 2 "Ctrl-D leaves after the errors"
tmux -S "$sock" kill-server 2>/dev/null
if grep -F -q 'generator S^2' "$XDG_STATE_HOME/itox/history"; then
	echo "ok: history file written"
else
	echo "FAILED: history file"; fail=1
fi
start
keys Up
expect 'itox> generator S^2' "history available after a restart"
keys C-a C-k C-d
left 0 "the restarted REPL leaves"
tmux -S "$sock" kill-server 2>/dev/null

# ---- correcting declarations; whole or not at all (run in the work folder,
# where the file to load is written; a server of its own)
cd "$work" || exit 1
sock="$work/tmux2.sock"
start
keys 'param mu, sigma > 0; param rho in [-1, 1]; noise W, B' Enter
keys 'dS = mu*S*dt + sigma*S*dW; assume S > 0' Enter
keys 'd log(S)' Enter
expect 'd(log(S)) = (mu - 1/2*sigma^2)*dt + sigma*dW' "a query before the correction"

# the SDE of S again: replaced, one line says so; the result printed before stays
keys 'dS = 2*mu*S*dt + sigma*S*dW' Enter
expect 'replaced the SDE of S' "a new SDE replaces the old one and says so"
keys 'd log(S)' Enter
expect 'd(log(S)) = (2*mu - 1/2*sigma^2)*dt + sigma*dW' "queries use the new SDE"
expect 'd(log(S)) = (mu - 1/2*sigma^2)*dt + sigma*dW' "the result printed before is unchanged"
# the same SDE again changes nothing and says nothing
fresh
keys 'dS = 2*mu*S*dt + sigma*S*dW' Enter 'show S' Enter
expect 'dS = 2*mu*S*dt + sigma*S*dW' "the same SDE again"
if screen | grep -F -q 'replaced'; then echo "FAILED: the same SDE again said replaced"; fail=1; fi

# a parameter's domain: c > 0 makes sqrt(c^2) = c; in [-1, 1] does not
keys 'param c > 0' Enter 'param c in [-1, 1]' Enter
expect 'replaced the domain of c' "a parameter's domain replaced"
keys 'sqrt(c^2)' Enter
expect 'abs(c)' "the old sign is gone with the old domain"
keys 'param c > 0' Enter 'sqrt(c^2) + 1' Enter
expect '1 + c' "the domain replaced again"
# a narrower domain of a parameter in use is fine; a wider one is refused:
# the SDE of S was simplified under sigma > 0
keys 'param sigma in [1, 2]' Enter
expect 'replaced the domain of sigma' "a narrower domain of a parameter in use"
keys 'param sigma in [-1, 2]' Enter
expect "cannot widen the domain of 'sigma': the SDE of S was simplified under the old one; forget what uses it first" "a wider domain of a parameter in use is refused"

# a correlation, a let and a measure
keys 'corr(W, B) = rho' Enter 'corr(W, B) = 1/2' Enter
expect 'replaced the correlation of W and B' "a correlation replaced"
keys 'dS*dB' Enter
expect 'dS*dB = 1/2*sigma*S*dt' "queries use the new correlation"
keys 'let Y = log(S)' Enter 'let Y = log(S^2)' Enter
expect 'replaced the definition of Y' "a let replaced"
keys 'Y' Enter
expect '2*log(S)' "the new definition is used"
keys 'measure Q: dB = dZ - mu*dt' Enter 'measure Q: dB = dZ - sigma*dt' Enter
expect 'replaced the measure Q' "a measure replaced"

# forget: what uses a name, then an unused declaration
fresh
keys 'forget mu' Enter
expect "error: cannot forget 'mu': the SDE of S uses it" "forget says what uses a name"
keys 'forget Q' Enter
expect 'forgot the measure Q' "forget removes an unused measure"
keys 'd S under Q' Enter
expect "unknown measure 'Q'" "the forgotten measure is gone"
keys 'forget Y' Enter 'forget S' Enter
expect 'forgot the state S' "forget removes a state nothing uses"
keys 'param S' Enter 'sqrt(S^2)' Enter
expect 'abs(S)' "a name forgotten and declared again starts afresh (no sign)"

# whole or not at all: a failed declaration and a failed load change nothing
fresh
keys 'param q1, q2 in [1, nosuch]' Enter
expect "unknown name 'nosuch'" "a declaration that fails"
keys 'q1' Enter
expect "unknown name 'q1'" "its first name is not declared"
printf 'param u > 0\nnoise V\nlet M = 2*u\nnosuch + 1\n' >part.itox
keys 'load part.itox' Enter
expect "note: nothing of 'part.itox' was loaded" "a load with an error at line 4"
expect "part.itox:4:1: error: unknown name 'nosuch'" "the error names the file and its line"
keys 'u + M' Enter
expect "unknown name 'u'" "nothing of the file was applied"
keys 'load no-such-folder/part.itox' Enter
expect "error: cannot read 'no-such-folder/part.itox': No such file or directory" "a file that cannot be read: the reason"
if screen | grep -F -q 'please report'; then echo "FAILED: a missing file is reported as an internal error"; fail=1; fi
keys 'drift S' Enter
expect 'drift(S) = 0' "the session is intact after the failures"
keys C-d
left 2 "the REPL leaves after corrections and failures"
tmux -S "$sock" kill-server 2>/dev/null
exit $fail
