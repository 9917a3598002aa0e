#!/bin/sh
# check-verdicts.sh - the verdicts of `check` as data and its behaviour at the
# terminal: JSON "verdict" and "reason" for each of consistent, inconsistent
# and undecided with the exit status (0, 1, 1); the errors of `where`; the
# progress line on standard error only when that is a terminal (script(1)
# gives the program one); --time-limit stops a check (exit status 3).
# The mathematics of the cases is in tests/scripts/check-right-cases.itox,
# check-wrong-cases.itox and check-undecided.itox.
set -u
ITOX=${ITOX:-./itox}
case $ITOX in /*) ;; *) ITOX=$(pwd)/$ITOX ;; esac
# ITOX_SLOW: how many times slower the program runs (50 under configure
# --enable-valgrind); the time limit that must outlast the progress line is
# scaled by it
slow=${ITOX_SLOW:-1}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fail=0
ok() { echo "ok: $1"; }
bad() { echo "FAILED: $1"; fail=1; }

cat > "$work/gbm.itox" <<'MODEL'
param mu, sigma > 0
func vol(t, S)
noise W
dS = mu*S*dt + sigma*S*dW
assume S > 0
MODEL
GBM="S=100, mu=0.05, sigma=0.2"

# verdict STATEMENT VERDICT STATUS [REASON-TEXT]
verdict() {
	"$ITOX" --format=json "$work/gbm.itox" -e "$1" > "$work/out.json" 2> "$work/err.txt"
	status=$?
	if [ $status -ne "$3" ] || ! grep -q "\"verdict\":\"$2\"" "$work/out.json"; then
		bad "$1: expected $2 (status $3), got status $status"; cat "$work/out.json" "$work/err.txt"
	elif [ -n "${4:-}" ] && ! grep -q "\"reason\":\"[^\"]*$4" "$work/out.json"; then
		bad "$1: the reason does not say '$4'"; cat "$work/out.json"
	else
		ok "$1: $2"
	fi
}
verdict "check d log(S) at $GBM over paths=2000" consistent 0
verdict "check d log(S) = mu*dt + sigma*dW at $GBM over paths=2000" inconsistent 1 "martingale residual"
verdict "check d exp(-S) at S=1000, mu=0.05, sigma=0.2 over paths=200" undecided 1 "range of double"
verdict "check d log(S) at $GBM over steps=3, paths=2000" undecided 1 "under 4 steps"
verdict "check d log(S) at $GBM over paths=20" undecided 1 "too few usable paths"
verdict "check d exp(S) at S=700, mu=0.05, sigma=0.2 over steps=100, paths=1000" undecided 1 "overflowed"
# a consistent check has no reason
"$ITOX" --format=json "$work/gbm.itox" -e "check d log(S) at $GBM over paths=500" > "$work/out.json"
status=$?
if [ $status -ne 0 ]; then bad "a consistent check: exit status $status"
elif grep -q '"reason"' "$work/out.json"; then bad "a consistent check has a reason"; else ok "no reason when consistent"; fi

# where: errors with their places (exit status 2)
where_error() {
	"$ITOX" "$work/gbm.itox" -e "check d vol(t, S) at $GBM where $1" > /dev/null 2> "$work/err.txt"
	status=$?
	if [ $status -eq 2 ] && grep -q -- "$2" "$work/err.txt"; then ok "where $1: $2"; else bad "where $1: status $status"; cat "$work/err.txt"; fi
}
where_error "vol(t) = 0.2" "'vol' takes 2 arguments, not 1"
where_error "mu(t) = 0.2" "'mu' is a parameter, not a function"
where_error "vol(S, S) = 0.2" "the argument 'S' is repeated"
where_error "vol(t, S) = 0.2, vol(t, S) = 0.3" "'vol' is given two concrete forms"
where_error "vol(t, S) = 0.2 + nonesuch" "unknown name 'nonesuch'"

# the progress line: shown on a terminal when the check runs over a second,
# never when standard error is a file.  The check (three geometric Brownian
# motions, 1000 steps, 200000 paths) needs about 25 s of two cores on an idle
# machine and far more under the sanitizers; the time limit cuts it at 8 s.
# The progress line is updated after each block of paths the first thread
# finishes, so it appears just after one second in the plain build and under
# the sanitizers alike, well inside 8 s even on a loaded machine (8 s times
# ITOX_SLOW under valgrind: the check still outlasts it).
printf '%s\n' 'param mu, sigma > 0' 'noise W, B, C' 'dS = mu*S*dt + sigma*S*dW' \
	'dU = mu*U*dt + sigma*U*dB' 'dV = mu*V*dt + sigma*V*dC' 'assume S > 0, U > 0, V > 0' > "$work/three.itox"
long="check d log(S*U*V) + sin(S/U) + cos(U/V) at S=100, U=50, V=70, mu=0.05, sigma=0.2 over steps=1000, paths=200000"
if command -v script > /dev/null 2>&1; then
	script -qec "'$ITOX' --time-limit=$((8 * slow)) '$work/three.itox' -e '$long' > /dev/null" "$work/tty.txt" > /dev/null 2>&1
	status=$? # script -e: the program's (3: the time limit; 99: valgrind's)
	[ $status -eq 3 ] || bad "the check on a terminal: exit status $status, expected 3"
	if grep -q "check: *[0-9]*% of the paths simulated" "$work/tty.txt"; then ok "progress on a terminal"
	else bad "no progress line on a terminal"; cat "$work/tty.txt"; fi
	if grep -q "time limit exceeded" "$work/tty.txt"; then ok "the time limit stops a check"
	else bad "the time limit did not stop the check"; fi
else
	echo "script(1) not installed: the terminal part skipped"
fi
"$ITOX" --time-limit=1.5 "$work/three.itox" -e "$long" > /dev/null 2> "$work/err.txt"
status=$?
if [ $status -eq 3 ] && ! grep -q "paths simulated" "$work/err.txt"; then ok "no progress line when stderr is a file; exit 3"
else bad "stderr to a file: status $status"; cat "$work/err.txt"; fi
exit $fail
