#!/bin/sh
# ito-refusals.sh - Itô's formula only where it applies (issue 13, item 7).
# It needs a function twice continuously differentiable on an open set the
# processes stay in (Karatzas and Shreve, Brownian Motion and Stochastic
# Calculus, Theorem 3.3.6, from memory).  Each case below is refused with
# exit status 2 and a message naming the function and the bad point (a
# corner needs a local-time term, Tanaka's formula, ibid. §3.6, from memory;
# a pole or a point outside the domain of definition admits no formula), or
# accepted because the model's signs, ranges or relations keep the state
# away from the bad point.  The mathematics of the accepted results is
# checked against SymPy in tests/ref/ito_examples.py (group_domains) where
# marked "sympy"; the rest by hand in the comment beside them.
set -u
ITOX=${ITOX:-./itox}
case $ITOX in /*) ;; *) ITOX=$(pwd)/$ITOX ;; esac
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fail=0
n=0
HEAD="Itô's formula needs a function twice differentiable where the processes can go, and"

# run STATUS WANT ARGS...: the model (noise W, param a, b, dX = dW), then
# ARGS; WANT is the first line of stderr when STATUS is 2, else stdout
run() {
	want_status=$1 want=$2
	shift 2
	"$ITOX" -e 'noise W' -e 'param a, b' -e 'dX = dW' "$@" >"$work/out" 2>"$work/err"
	status=$?
	if [ "$want_status" -eq 0 ]; then got=$(cat "$work/out"); else got=$(head -n 1 "$work/err"); fi
	n=$((n + 1))
	if [ "$status" -ne "$want_status" ] || [ "$got" != "$want" ]; then
		echo "FAILED: $* (status $status, expected $want_status)"
		echo "  got:      $got"
		echo "  expected: $want"
		[ "$want_status" -eq 0 ] && sed 's/^/  stderr: /' "$work/err"
		fail=1
	fi
}

# --- refused: not twice differentiable, not defined, or a pole, where X can go
# a symbolic exponent: X^a for a = 1/2 is undefined for X < 0 and not C^2 at 0
run 2 "-e:4:1: error: $HEAD X^a, with a symbolic exponent, is not defined where X < 0 nor, for some exponents, twice differentiable where X = 0 (a local-time term would be needed); assume X > 0 if the model does, or write an integer exponent as a number" -e 'd X^a'
run 2 "-e:4:1: error: $HEAD W^a, with a symbolic exponent, is not defined where W < 0 nor, for some exponents, twice differentiable where W = 0 (a local-time term would be needed); assume W > 0 if the model does, or write an integer exponent as a number" -e 'd W^a'
run 2 "-e:4:1: error: $HEAD a^X is not defined for every exponent where a <= 0; assume a > 0 if the model does" -e 'd a^X'
# exp(a*log(X)) is X^a only for X > 0: log refuses it first
run 2 "-e:4:1: error: $HEAD log(X) is not defined where X <= 0 (a pole at X = 0); assume X > 0 if the model does" -e 'd exp(a*log(X))'
# tan: poles at pi/2 + k*pi; 8/5 > pi/2, so the range [-8/5, 1] reaches one
TAN="$HEAD tan(X) has poles where X = pi/2 + k*pi (the formula does not hold across them); assume a range that keeps X inside (-pi/2, pi/2) if the model does"
run 2 "-e:4:1: error: $TAN" -e 'd tan(X)'
run 2 "-e:5:1: error: $TAN" -e 'assume X in [-8/5, 1]' -e 'd tan(X)'
run 2 "-e:4:1: error: $TAN" -e 'd exp(tan(X))'
# log needs u > 0: X >= 0 reaches 0, X < 0 is outside, [-1, 1] reaches 1 + X = 0
LOGX="$HEAD log(X) is not defined where X <= 0 (a pole at X = 0); assume X > 0 if the model does"
run 2 "-e:4:1: error: $LOGX" -e 'd log(X)'
run 2 "-e:5:1: error: $LOGX" -e 'assume X >= 0' -e 'd log(X)'
run 2 "-e:5:1: error: $LOGX" -e 'assume X < 0' -e 'd log(X)'
run 2 "-e:5:1: error: $HEAD log(1 + X) is not defined where 1 + X <= 0 (a pole at 1 + X = 0); assume 1 + X > 0 if the model does" -e 'assume X in [-1, 1]' -e 'd log(X + 1)'
# even roots need u > 0 (u < 0 is outside, u = 0 a corner for exponents < 2)
run 2 "-e:4:1: error: $HEAD sqrt(X) is not defined where X < 0 nor twice differentiable where X = 0 (a local-time term would be needed); assume X > 0 if the model does" -e 'd X^(1/2)'
run 2 "-e:5:1: error: $HEAD sqrt(X) is not defined where X < 0 nor twice differentiable where X = 0 (a local-time term would be needed); assume X > 0 if the model does" -e 'assume X < 0' -e 'd sqrt(X)'
run 2 "-e:4:1: error: $HEAD X^(1/4) is not defined where X < 0 nor twice differentiable where X = 0 (a local-time term would be needed); assume X > 0 if the model does" -e 'd X^(1/4)'
run 2 "-e:4:1: error: $HEAD X^(5/2) is not defined where X < 0; assume X > 0 if the model does" -e 'd X^(5/2)'
# poles: 1/u needs u != 0 everywhere the state goes
run 2 "-e:4:1: error: $HEAD 1/X has a pole where X = 0 (the formula does not hold across it); assume a sign that keeps X away from 0 if the model does" -e 'd 1/X'
run 2 "-e:4:1: error: $HEAD 1/X^(1/3) has a pole where X = 0 (the formula does not hold across it); assume a sign that keeps X away from 0 if the model does" -e 'd X^(-1/3)'
run 2 "-e:4:1: error: $HEAD log(abs(X)) has a pole where X = 0 (the formula does not hold across it); assume a sign that keeps X away from 0 if the model does" -e 'd log(X^2)'
run 2 "-e:4:1: error: $HEAD 1/cos(X) has a pole where cos(X) = 0 (the formula does not hold across it); assume a sign that keeps cos(X) away from 0 if the model does" -e 'd 1/cos(X)'
# corners: odd roots under 2, abs(u)^p for p < 2 (X*abs(X) is C^1 only: its
# second derivative is 2*sign(X))
run 2 "-e:4:1: error: $HEAD X^(1/3) is not where X = 0 (a local-time term would be needed); assume a sign that keeps X away from 0 if the model does" -e 'd X^(1/3)'
ABSX="$HEAD abs(X) is not where X = 0 (a local-time term would be needed); assume a sign that keeps X away from 0 if the model does"
run 2 "-e:4:1: error: $ABSX" -e 'd abs(X)'
run 2 "-e:4:1: error: $ABSX" -e 'd X*abs(X)'
run 2 "-e:4:1: error: $HEAD abs(X)^(3/2) is not where X = 0 (a local-time term would be needed); assume a sign that keeps X away from 0 if the model does" -e 'd abs(X)^(3/2)'
# in C^2, but the derivatives as the engine writes them divide by u: refused
# rather than printed with a removable singularity
run 2 "-e:4:1: error: abs(X)^(5/2) is twice differentiable, but its derivatives as written divide by X, which can be 0; assume a sign that keeps X away from 0 if the model does" -e 'd abs(X)^(5/2)'
run 2 "-e:4:1: error: abs(1 + X)^3 is twice differentiable, but its derivatives as written divide by 1 + X, which can be 0; assume a sign that keeps 1 + X away from 0 if the model does" -e 'd abs(X + 1)^3'

# --- accepted
# sympy: abs(X)^3 is C^2 on the whole line
run 0 "d(abs(X)^3) = 3*abs(X)*dt + 3*X*abs(X)*dW" -e 'd abs(X)^3'
# f = abs(x)^5: f' = 5*x^3*abs(x), f''/2 = 10*x^2*abs(x) (by hand)
run 0 "d(abs(X)^5) = 10*X^2*abs(X)*dt + 5*X^3*abs(X)*dW" -e 'd abs(X)^5'
run 0 "d(X^2) = dt + 2*X*dW" -e 'd abs(X)^2'
# 3/2 < pi/2: the range keeps tan smooth (sympy: tan(Y), Y in [-1, 1])
run 0 "d(tan(X)) = (1 + tan(X)^2)*tan(X)*dt + (1 + tan(X)^2)*dW" -e 'assume X in [-3/2, 3/2]' -e 'd tan(X)'
# f = log(1 + x): f' = 1/(1 + x), f''/2 = -1/(2(1 + x)^2) (by hand)
run 0 "d(log(1 + X)) = -1/2*(1 + X)^(-2)*dt + 1/(1 + X)*dW" -e 'assume X > -1' -e 'd log(X + 1)'
# sympy: V^b for V > 0
run 0 "d(X^a) = 1/2*a*(a - 1)*X^(a - 2)*dt + a*X^(a - 1)*dW" -e 'assume X > 0' -e 'd X^a'
run 0 "d(a^X) = 1/2*a^X*log(a)^2*dt + a^X*log(a)*dW" -e 'assume a > 0' -e 'd a^X'
# sympy: 1/(Y - 2) for Y in [-1, 1]
run 0 "d(1/(X - 2)) = (X - 2)^(-3)*dt - (X - 2)^(-2)*dW" -e 'assume X in [-1, 1]' -e 'd 1/(X - 2)'
# f = 1/x for x < 0: f' = -1/x^2, f''/2 = 1/x^3 (by hand)
run 0 "d(1/X) = 1/X^3*dt - 1/X^2*dW" -e 'assume X < 0' -e 'd 1/X'
# sympy: log(Z - a) for Z > a (a relation between a state and a parameter)
run 0 "d(log(X - a)) = -1/2*(a - X)^(-2)*dt - 1/(a - X)*dW" -e 'assume X > a' -e 'd log(X - a)'
# a numeric bound and a relation keep X - 200 > 0 (sympy: sqrt(2 + Y))
SQ="d(sqrt(X - 200)) = -1/(8*(X - 200)^(3/2))*dt + 1/(2*sqrt(X - 200))*dW"
run 0 "$SQ" -e 'assume X > 200' -e 'd sqrt(X - 200)'
run 0 "$SQ" -e 'assume X - 200 > 0' -e 'd sqrt(X - 200)'
# 1 - X^2 >= 3/4 on [-1/2, 1/2]; f = log(1 - x^2): f' = 2x/(x^2 - 1),
# f''/2 = (1 - 2x^2/(x^2 - 1))/(x^2 - 1) (by hand)
run 0 "d(log(1 - X^2)) = (1 - 2*X^2/(X^2 - 1))/(X^2 - 1)*dt + 2*X/(X - 1)/(1 + X)*dW" -e 'assume X in [-1/2, 1/2]' -e 'd log(1 - X^2)'
# odd roots of exponent over 2 are C^2 on the whole line: (7/3)(4/3)/2 = 14/9
run 0 "d(X^(7/3)) = 14/9*X^(1/3)*dt + 7/3*X^(4/3)*dW" -e 'd X^(7/3)'

# --- the expression as written: a part that Itô's formula refuses is refused
# even where the whole simplifies to a smooth function (the caret names the
# part).  sqrt(X)^2 is X, but sqrt(X) has no value where X < 0, so there is no
# process sqrt(X)^2 there; X^2/X is X, but not at X = 0.  A part that moves no
# process (sqrt(a) of a parameter) and a part the model keeps defined pass.
SQRTX="$HEAD sqrt(X) is not defined where X < 0 nor twice differentiable where X = 0 (a local-time term would be needed); assume X > 0 if the model does"
POLEX="$HEAD 1/X has a pole where X = 0 (the formula does not hold across it); assume a sign that keeps X away from 0 if the model does"
run 2 "-e:4:3: error: $SQRTX" -e 'd sqrt(X)^2'
run 2 "-e:4:4: error: $SQRTX" -e 'd (X^(1/2))^4'
run 2 "-e:4:7: error: $POLEX" -e 'd X^2/X'
run 2 "-e:4:7: error: $SQRTX" -e 'drift(sqrt(X)^2)'
run 2 "-e:4:9: error: $SQRTX" -e 'claim d sqrt(X)^2 = dX'
run 2 "-e:4:8: error: $POLEX" -e 'qv X^2/X'
run 0 "dX = dW" -e 'assume X > 0' -e 'd sqrt(X)^2'
run 0 "d(sqrt(a)*X) = sqrt(a)*dW" -e 'd sqrt(a)*X'

[ $fail -eq 0 ] && echo "ito-refusals: $n cases as expected"
exit $fail
