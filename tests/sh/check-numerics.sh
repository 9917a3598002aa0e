#!/bin/sh
# check-numerics.sh - the numerical cross-check (`check`) against facts known
# without itox: the quadratic and first variation of Brownian motion, the mean
# of geometric Brownian motion, Itô's formula done by hand for log(S), sqrt(v),
# S1/S2 and W^2 (each hand result also confirmed with SymPy, see below), and
# wrong differentials that must be called inconsistent.  Every tolerance is a
# number of standard errors; fixed seeds; no timings.
set -u
ITOX=${ITOX:-./itox}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fail=0
pass=0

ok() { echo "ok: $1"; pass=$((pass + 1)); }
bad() { echo "FAILED: $1"; fail=$((fail + 1)); }

# A JSON number: field KEY FILE gives the first "KEY":number after the
# text given in $3 (default: start of line).
field() {
	sed -n "s/.*${3:-}\"$1\":\([-0-9.eE+]*\).*/\1/p" "$2" | head -n 1
}

# awk as a calculator: holds EXPR exits 0 when the condition is true
holds() {
	awk "BEGIN { exit !($1) }"
}

cat > "$work/gbm.itox" <<'EOF'
param mu, sigma > 0
noise W
dS = mu*S*dt + sigma*S*dW
assume S > 0
EOF
cat > "$work/cir.itox" <<'EOF'
param kappa, theta, xi > 0
noise B
dv = kappa*(theta - v)*dt + xi*sqrt(v)*dB
assume v > 0
EOF
cat > "$work/two.itox" <<'EOF'
param mu1, mu2, s1, s2 > 0
param rho in [-1, 1]
noise W1, W2
corr(W1, W2) = rho
dS1 = mu1*S1*dt + s1*S1*dW1
dS2 = mu2*S2*dt + s2*S2*dW2
assume S1 > 0, S2 > 0
EOF
cat > "$work/bm.itox" <<'EOF'
noise W
EOF
GBM="S=100, mu=0.05, sigma=0.2"
CIR="v=0.04, kappa=2, theta=0.04, xi=0.2"
TWO="S1=100, S2=80, mu1=0.05, mu2=0.03, s1=0.2, s2=0.3, rho=0.6"

# run MODEL STATEMENT: JSON output in $work/out.json, status in $status (a
# status over 3 is never itox's: 99 is valgrind's under configure
# --enable-valgrind, over 128 a signal)
run() {
	"$ITOX" --format=json "$work/$1.itox" -e "$2" > "$work/out.json" 2> "$work/err.txt"
	status=$?
	[ $status -le 3 ] || { bad "$2: exit status $status"; cat "$work/err.txt"; }
}

# 1. Brownian motion on [0, 1]: the realised quadratic variation over n steps
# has mean 1 and standard deviation sqrt(2/n) (Shreve, Stochastic Calculus for
# Finance II, Theorem 3.4.3 and its proof, from memory: [W, W](T) = T and
# Var Q_n = 2 T^2 / n); the first variation sum |dW| has mean sqrt(2 n / pi),
# so it grows like sqrt(n) without bound (E|N(0, 1/n)| = sqrt(2/(pi n)),
# common practice, no source).
run bm 'check W at W=0 over paths=2000 verbose'
if [ $status -ne 0 ]; then
	bad "check W verbose: status $status"; cat "$work/err.txt"
else
	paths=$(field convergence_paths "$work/out.json")
	for n in 10 100 1000 10000; do
		qv=$(field qv "$work/out.json" "\"steps\":$n,")
		sd=$(sed -n "s/.*\"steps\":$n,[^}]*\"sd\":\([-0-9.eE+]*\).*/\1/p" "$work/out.json")
		fv=$(sed -n "s/.*\"steps\":$n,[^}]*\"first_variation\":\([-0-9.eE+]*\).*/\1/p" "$work/out.json")
		# mean of QV within 4 standard errors sqrt(2/n)/sqrt(paths)
		if holds "($qv - 1)^2 < 16 * 2 / $n / $paths"; then ok "QV of W, $n steps: $qv"; else bad "QV of W, $n steps: $qv"; fi
		# the spread of QV across paths is sqrt(2/n) (within 15%: the sample sd of
		# 1000 paths has a relative standard error under 3%)
		if holds "$sd > 0.85 * sqrt(2 / $n) && $sd < 1.15 * sqrt(2 / $n)"; then ok "sd of QV of W, $n steps: $sd";
		else bad "sd of QV of W, $n steps: $sd, expected sqrt(2/$n)"; fi
		# first variation: mean sqrt(2n/pi), sd of the mean sqrt((1 - 2/pi)/paths)
		if holds "($fv - sqrt(2 * $n / 3.141592653589793))^2 < 16 * (1 - 2 / 3.141592653589793) / $paths"; then
			ok "first variation of W, $n steps: $fv"
		else bad "first variation of W, $n steps: $fv, expected sqrt(2*$n/pi)"; fi
	done
fi

# 2. GBM: E[S_T] = S_0 exp(mu T) (Glasserman, Monte Carlo Methods in Financial
# Engineering, 3.2, from memory): the mean of f = S at T within 4 standard
# errors of 100*exp(0.05); and S*exp(-mu*t) is a martingale, so its check is
# consistent.
run gbm "check S at $GBM"
mean=$(field mean "$work/out.json" '"terminal":{')
se=$(field se "$work/out.json" '"terminal":{"mean":[-0-9.eE+]*,')
if [ $status -eq 0 ] && holds "($mean - 100 * exp(0.05))^2 < 16 * $se^2 && $se > 0 && $se < 0.5"; then
	ok "GBM mean of S_T: $mean (se $se), expected $(awk 'BEGIN{printf "%.4f", 100*exp(0.05)}')"
else
	bad "GBM mean of S_T: $mean (se $se), status $status"
fi
run gbm "check d S*exp(-mu*t) at $GBM, t=0"
if [ $status -eq 0 ] && grep -q '"consistent":true' "$work/out.json"; then ok "d S*exp(-mu*t) consistent"; else bad "d S*exp(-mu*t): status $status"; fi
# under P with mu = 0.05 the discounted price at rate 0.02 is no martingale:
# the hand claim "zero drift" must fail (its drift is (mu - 0.02)*exp(-0.02*t)*S)
run gbm "check d S*exp(-0.02*t) = sigma*exp(-0.02*t)*S*dW at $GBM"
if [ $status -eq 1 ]; then ok "S*exp(-0.02 t) claimed martingale: inconsistent"; else bad "S*exp(-0.02 t) martingale claim: status $status"; fi

# 3. The engine's own differentials are consistent.  By hand (Itô's formula;
# Shreve II, 4.4, from memory), each also assembled in SymPy for this test's
# writing (sympy.diff, assembled term by term):
#   d log S      = (mu - sigma^2/2) dt + sigma dW
#   d sqrt v     = ((kappa theta/2 - xi^2/8)/sqrt v - kappa sqrt v/2) dt + xi/2 dB
#   d (S1/S2)    = (mu1 - mu2 + s2^2 - rho s1 s2) S1/S2 dt + s1 S1/S2 dW1 - s2 S1/S2 dW2
#   d W^2        = dt + 2 W dW          (Øksendal, 6th ed., ch. 4, from memory)
# and the same, typed by hand, are consistent too.
for case in "gbm|d log(S) at $GBM" "cir|d sqrt(v) at $CIR" "two|d S1/S2 at $TWO" "bm|d W^2 at W=0" \
	"gbm|d log(S) = (mu - sigma^2/2)*dt + sigma*dW at $GBM" \
	"cir|d sqrt(v) = ((kappa*theta/2 - xi^2/8)/sqrt(v) - kappa*sqrt(v)/2)*dt + xi/2*dB at $CIR" \
	"two|d S1/S2 = (mu1 - mu2 + s2^2 - rho*s1*s2)*S1/S2*dt + s1*S1/S2*dW1 - s2*S1/S2*dW2 at $TWO" \
	"bm|d W^2 = dt + 2*W*dW at W=0"; do
	model=${case%%|*} statement="check ${case#*|} over paths=5000"
	run "$model" "$statement"
	if [ $status -eq 0 ] && grep -q '"consistent":true' "$work/out.json" && grep -q '"bad_paths":0' "$work/out.json"; then
		ok "consistent: $statement"
	else
		bad "expected consistent: $statement (status $status)"; cat "$work/out.json" "$work/err.txt"
	fi
done
# this case violates Feller's condition 2 kappa theta > xi^2: the Euler
# scheme goes below 0 and the positive state is kept in its domain (and the
# paths that touched the boundary reported); the scheme's bias at the boundary
# may leave the grid too coarse to judge: consistent or undecided, never
# inconsistent (the differential dv is the SDE itself)
statement="check d v at v=0.04, kappa=2, theta=0.04, xi=0.5 over paths=5000"
run cir "$statement"
if grep -q '"verdict":"consistent"' "$work/out.json" ||
	{ [ $status -eq 1 ] && grep -q '"verdict":"undecided","consistent":false' "$work/out.json" &&
	  grep -q 'too coarse to judge' "$work/out.json"; }; then
	ok "consistent or undecided (never inconsistent): $statement"
else
	bad "expected consistent or undecided: $statement (status $status)"; cat "$work/out.json" "$work/err.txt"
fi
if grep -q '"truncated_paths":[1-9]' "$work/out.json"; then ok "full truncation reported"; else bad "full truncation not reported"; fi
# Milstein on a diagonal model
run cir "check d sqrt(v) at $CIR over paths=5000, scheme=milstein"
if [ $status -eq 0 ] && grep -q '"scheme":"milstein"' "$work/out.json"; then ok "Milstein: consistent"; else bad "Milstein d sqrt(v): status $status"; fi

# 4. Wrong differentials (each differs from the hand results above) are
# inconsistent, exit status 1.  Perturbations: a missing Itô term, a sign, a
# diffusion scaled by 1.2, a drift moved by 10% of its typical term, a factor.
for case in \
	"gbm|d log(S) = (mu)*dt + sigma*dW at $GBM" \
	"gbm|d log(S) = (mu - sigma^2)*dt + sigma*dW at $GBM" \
	"gbm|d log(S) = (mu - sigma^2/2)*dt - sigma*dW at $GBM" \
	"gbm|d log(S) = (mu - sigma^2/2)*dt + 1.2*sigma*dW at $GBM" \
	"gbm|d log(S) = (mu - sigma^2/2 + 0.003)*dt + sigma*dW at $GBM" \
	"gbm|d S^2 = 2*mu*S^2*dt + 2*sigma*S^2*dW at $GBM" \
	"bm|d W^2 = 2*W*dW at W=0" \
	"bm|d W^2 = dt + 2.4*W*dW at W=0" \
	"cir|d sqrt(v) = kappa*(theta - v)/(2*sqrt(v))*dt + xi/2*dB at $CIR" \
	"cir|d sqrt(v) = ((kappa*theta/2 - xi^2/8)/sqrt(v) - kappa*sqrt(v)/2)*dt + xi*dB at $CIR" \
	"cir|d sqrt(v) = ((kappa*theta/2 - xi^2/8)/sqrt(v) - 0.55*kappa*sqrt(v))*dt + xi/2*dB at $CIR" \
	"two|d S1/S2 = (mu1 - mu2 + s2^2)*S1/S2*dt + s1*S1/S2*dW1 - s2*S1/S2*dW2 at $TWO" \
	"two|d S1/S2 = (mu1 - mu2 + s2^2 - rho*s1*s2)*S1/S2*dt + s1*S1/S2*dW1 + s2*S1/S2*dW2 at $TWO" \
	"two|d S1/S2 = (mu1 - mu2 + s2^2 - rho*s1*s2)*S1/S2*dt + s2*S1/S2*dW1 - s1*S1/S2*dW2 at $TWO"; do
	model=${case%%|*} statement="check ${case#*|} over paths=5000"
	run "$model" "$statement"
	if [ $status -eq 1 ] && grep -q '"consistent":false' "$work/out.json"; then
		ok "inconsistent: $statement"
	else
		bad "expected inconsistent (status 1): $statement (status $status)"; cat "$work/out.json" "$work/err.txt"
	fi
done

# 5. The same output whatever the number of threads (blocks seeded by index).
cat "$work/two.itox" > "$work/threads.itox"
cat >> "$work/threads.itox" <<EOF
check d S1/S2 at $TWO over paths=3000, steps=200
check d S1*S2 at $TWO over paths=1000, steps=100 verbose
EOF
OMP_NUM_THREADS=1 "$ITOX" "$work/threads.itox" > "$work/one.txt" 2>&1
one=$?
OMP_NUM_THREADS=2 "$ITOX" "$work/threads.itox" > "$work/two.txt" 2>&1
two=$?
[ $one -le 3 ] && [ $two -le 3 ] || bad "threads: exit status $one with 1 thread, $two with 2"
if [ -s "$work/one.txt" ] && cmp -s "$work/one.txt" "$work/two.txt"; then ok "same output with 1 and 2 threads";
else bad "output differs between 1 and 2 threads"; diff "$work/one.txt" "$work/two.txt" | head; fi

# 6. Limits and input errors.
run gbm "check d log(S) at $GBM over steps=100000, paths=100000"
if [ $status -eq 3 ] && grep -q 'simulation too large' "$work/err.txt"; then ok "work limit: exit 3"; else bad "work limit: status $status"; fi
run gbm "check d log(S) at S=100, mu=0.05"
if [ $status -eq 2 ] && grep -q "check needs a value for 'sigma'" "$work/err.txt"; then ok "missing value: exit 2"; else bad "missing value: status $status"; fi
run two "check d S1/S2 at S1=100, S2=80, mu1=0.05, mu2=0.03, s1=0.2, s2=0.3, rho=1.5"
if [ $status -eq 2 ]; then ok "correlation out of range: exit 2"; else bad "correlation out of range: status $status"; fi


# 7. More worked examples, the engine's own differential at a sensible point,
# and the same typed by hand.  Each differential is Itô's formula done by hand
# and confirmed with SymPy (sympy.diff assembled term by term) while writing
# this test:
#   OU dX = lam (m - X) dt + eta dV: d(exp(lam t) X) = lam m exp(lam t) dt +
#     eta exp(lam t) dV (the integrating factor; Øksendal, 6th ed., ch. 5,
#     from memory)
#   d W^3 = 3 W dt + 3 W^2 dW (Øksendal, 6th ed., ch. 4, from memory)
#   d exp(sigma W - sigma^2 t/2) = sigma exp(sigma W - sigma^2 t/2) dW (same)
#   Vasicek dr = k (th - r) dt + s dW and a bond-like exp(-Bc r), Bc constant:
#     d exp(-Bc r) = (Bc^2 s^2/2 - Bc k (th - r)) exp(-Bc r) dt - Bc s exp(-Bc r) dW
#     (Vasicek, JFE 1977, for the model, from memory)
#   Heston-type with corr(Z1, Z2) = rh: d log P = (muh - u/2) dt + sqrt(u) dZ1;
#     d(P u) = (kap (vbar - u) + muh u + rh nu u) P dt + u^(3/2) P dZ1 + nu sqrt(u) P dZ2
#     (Heston, RFS 1993, for the model, from memory); the Euler scheme takes
#     the variance below 0 on some paths, so full truncation is in play
#   Stratonovich dY = a Y dt + b Y o dU: the Itô drift is (a + b^2/2) Y
#     (Kloeden and Platen, 4.9, from memory), and d log Y = a dt + b dU
#   under Q with dW = dZ - (mu - r)/sigma dt (Girsanov; Shreve II, 5.2, from
#     memory): d log S = (r - sigma^2/2) dt + sigma dZ, and the discounted
#     price S exp(-r t) has no drift.  (Hand-derived differentials under Q are
#     not tested: the right side cannot name dZ, see the report of issue 4.)
printf '%s\n' 'param lam, m, eta > 0' 'noise V' 'dX = lam*(m - X)*dt + eta*dV' > "$work/ou.itox"
printf '%s\n' 'param sigma > 0' 'noise W' > "$work/bms.itox"
printf '%s\n' 'param k, th, s > 0' 'param Bc' 'noise W' 'dr = k*(th - r)*dt + s*dW' > "$work/vas.itox"
printf '%s\n' 'param muh, kap, vbar, nu > 0' 'param rh in [-1, 1]' 'noise Z1, Z2' 'corr(Z1, Z2) = rh' \
	'dP = muh*P*dt + sqrt(u)*P*dZ1' 'du = kap*(vbar - u)*dt + nu*sqrt(u)*dZ2' 'assume P > 0, u > 0' > "$work/hes.itox"
printf '%s\n' 'param a, b > 0' 'noise U' 'stratonovich dY = a*Y*dt + b*Y*dU' 'assume Y > 0' > "$work/strat.itox"
printf '%s\n' 'param mu, sigma, r > 0' 'noise W' 'dS = mu*S*dt + sigma*S*dW' 'assume S > 0' \
	'measure Q: dW = dZ - (mu - r)/sigma*dt' > "$work/gbmq.itox"
OU="X=0.5, lam=1.5, m=1, eta=0.3, t=0"
VAS="r=0.03, k=0.8, th=0.05, s=0.01, Bc=2"
HES="P=100, u=0.04, muh=0.05, kap=1.5, vbar=0.04, nu=0.3, rh=-0.7"
STR="Y=1, a=0.1, b=0.3"
GQ="S=100, mu=0.08, r=0.03, sigma=0.2"
# The OU cases run 4000 steps: at 1000 steps the O(h^2) bias left after the
# extrapolation (about 8e-7) is 20 standard errors of the residual, whose
# noise the control variate has almost removed (a false alarm of check,
# reported with issue 4).
for case in "ou|d exp(lam*t)*X at $OU over steps=4000, paths=5000" \
	"bms|d W^3 at W=0.5 over paths=5000" \
	"bms|d exp(sigma*W - sigma^2*t/2) at W=0, t=0, sigma=0.4 over paths=5000" \
	"vas|d exp(-Bc*r) at $VAS over paths=5000" \
	"hes|d log(P) at $HES over paths=5000" \
	"hes|d P*u at $HES over paths=5000" \
	"strat|d Y at $STR over paths=5000" \
	"strat|d log(Y) at $STR over paths=5000" \
	"gbmq|d log(S) at $GQ over paths=5000 under Q" \
	"gbmq|d S*exp(-r*t) at $GQ, t=0 over paths=5000 under Q" \
	"ou|d exp(lam*t)*X = lam*m*exp(lam*t)*dt + eta*exp(lam*t)*dV at $OU over steps=4000, paths=5000" \
	"bms|d W^3 = 3*W*dt + 3*W^2*dW at W=0.5 over paths=5000" \
	"bms|d exp(sigma*W - sigma^2*t/2) = sigma*exp(sigma*W - sigma^2*t/2)*dW at W=0, t=0, sigma=0.4 over paths=5000" \
	"vas|d exp(-Bc*r) = (Bc^2*s^2/2 - Bc*k*(th - r))*exp(-Bc*r)*dt - Bc*s*exp(-Bc*r)*dW at $VAS over paths=5000" \
	"hes|d log(P) = (muh - u/2)*dt + sqrt(u)*dZ1 at $HES over paths=5000" \
	"hes|d P*u = (kap*(vbar - u) + muh*u + rh*nu*u)*P*dt + u*sqrt(u)*P*dZ1 + nu*sqrt(u)*P*dZ2 at $HES over paths=5000" \
	"strat|d Y = (a + b^2/2)*Y*dt + b*Y*dU at $STR over paths=5000"; do
	model=${case%%|*} statement="check ${case#*|}"
	run "$model" "$statement"
	if [ $status -eq 0 ] && grep -q '"consistent":true' "$work/out.json" && grep -q '"bad_paths":0' "$work/out.json"; then
		ok "consistent: $statement"
	else
		bad "expected consistent: $statement (status $status)"; cat "$work/out.json" "$work/err.txt"
	fi
done
run hes "check d log(P) at $HES over paths=5000"
if grep -q '"truncated_paths":[1-9]' "$work/out.json"; then ok "Heston: full truncation reported"; else bad "Heston: full truncation not reported"; fi
run gbmq "check d log(S) at $GQ over paths=2000 under Q"
if grep -q '"covariation":{"Z":' "$work/out.json"; then ok "under Q: the noise is Z"; else bad "under Q: noise name"; cat "$work/out.json"; fi

# 8. Mutations of the examples of 7 (the drift, or one diffusion coefficient,
# perturbed) are inconsistent, exit status 1.
for case in "ou|d exp(lam*t)*X = lam*(m - X)*exp(lam*t)*dt + eta*exp(lam*t)*dV at $OU over steps=4000" \
	"ou|d exp(lam*t)*X = lam*m*exp(lam*t)*dt + eta*dV at $OU over steps=4000" \
	"bms|d W^3 = 3*W^2*dW at W=0.5" \
	"bms|d W^3 = 3*W*dt + 3*W*dW at W=0.5" \
	"bms|d exp(sigma*W - sigma^2*t/2) = sigma^2/2*exp(sigma*W - sigma^2*t/2)*dt + sigma*exp(sigma*W - sigma^2*t/2)*dW at W=0, t=0, sigma=0.4" \
	"bms|d exp(sigma*W - sigma^2*t/2) = 1.2*sigma*exp(sigma*W - sigma^2*t/2)*dW at W=0, t=0, sigma=0.4" \
	"vas|d exp(-Bc*r) = -Bc*k*(th - r)*exp(-Bc*r)*dt - Bc*s*exp(-Bc*r)*dW at $VAS" \
	"vas|d exp(-Bc*r) = (Bc^2*s^2/2 - Bc*k*(th - r))*exp(-Bc*r)*dt + Bc*s*exp(-Bc*r)*dW at $VAS" \
	"hes|d log(P) = (muh - u)*dt + sqrt(u)*dZ1 at $HES" \
	"hes|d log(P) = (muh - u/2)*dt + sqrt(u)*dZ1 + 0.1*sqrt(u)*dZ2 at $HES" \
	"hes|d P*u = (kap*(vbar - u) + muh*u)*P*dt + u*sqrt(u)*P*dZ1 + nu*sqrt(u)*P*dZ2 at $HES" \
	"strat|d Y = a*Y*dt + b*Y*dU at $STR" \
	"strat|d log(Y) = (a - b^2/2)*dt + b*dU at $STR"; do
	model=${case%%|*} statement="check ${case#*|}"
	case $statement in *" over "*) statement="$statement, paths=5000" ;; *) statement="$statement over paths=5000" ;; esac
	run "$model" "$statement"
	if [ $status -eq 1 ] && grep -q '"consistent":false' "$work/out.json"; then
		ok "inconsistent: $statement"
	else
		bad "expected inconsistent (status 1): $statement (status $status)"; cat "$work/out.json" "$work/err.txt"
	fi
done

echo "$pass passed, $fail failed"
[ $fail -eq 0 ]
