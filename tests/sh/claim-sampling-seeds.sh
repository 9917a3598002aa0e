#!/bin/sh
# claim-sampling-seeds.sh - the false claims of tests/scripts/claim-sampling-marks.itox
# fail on every seed from 1 to 100 (not only on the seed of its expected output),
# the true ones hold, and each counterexample is one as printed: the point of
# its "at" text, read as an exact rational, makes the claim false.  Where
# abs(u) = -u and abs(u) = u hold is common practice, no source: abs(y - m) =
# m - y is false exactly when y > m, sqrt(u^2) = |u|, abs(u/3) = -u/3 only for
# u <= 0.
set -u
ITOX=${ITOX:-./itox}
src=${ITOX_SRCDIR:-.}
command -v python3 > /dev/null 2>&1 || { echo "python3 not installed: skipped"; exit 77; }
# under valgrind (ITOX_SLOW 50) a few seeds only
seeds=100
[ "${ITOX_SLOW:-1}" -gt 1 ] && seeds=4
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
seed=1
while [ $seed -le $seeds ]; do
	"$ITOX" --format=json --seed=$seed "$src/tests/scripts/claim-sampling-marks.itox" > "$work/$seed.json"
	seed=$((seed + 1))
done
python3 - "$work" $seeds <<'PY'
import json, sys
from fractions import Fraction as F

# line: (expected verdict, the claim is false at the point p: dict name -> Fraction)
D9, E12 = F(10) ** 9, F(1, 10 ** 12)
E30 = F("10686474581524.46214699046865074140165002449500547305499022291149210845")
false_at = {
	9: lambda p: p["y"] > D9,
	10: lambda p: p["y"] > F(1, 3),
	11: lambda p: p["y"] > F(-7, 2),
	12: lambda p: p["y"] > E12,
	13: lambda p: p["y"] > F(10) ** 300,
	14: lambda p: p["y"] > F(1, 10 ** 10),
	16: lambda p: p["y"] > D9,
	21: lambda p: p["a"] - p["b"] < E12,
	22: lambda p: p["a"] - p["b"] > E12,
	23: lambda p: p["b"] - 5 < F(1, 10 ** 15),
	24: lambda p: p["a"] > D9,
	26: lambda p: p["z"] < E12,
	37: lambda p: p["y"] > 3 * D9,
	38: lambda p: p["y"] - p["x"] > 3 * D9,
	# abs(u) = -u is false where u > 0: log(|y| + 1) > 30 where |y| + 1 > e^30
	# (e^30 to 70 digits, computed with mpmath at 80 digits), sqrt(|y|) > 4*10^7
	# where |y| > 1.6*10^15
	43: lambda p: abs(p["y"]) + 1 > E30,
	44: lambda p: abs(p["y"]) > 16 * 10 ** 14,
}
holds = {30, 31, 32}
work, seeds = sys.argv[1], int(sys.argv[2])
bad = 0
for seed in range(1, seeds + 1):
	seen = set()
	for text in open(f"{work}/{seed}.json"):
		obj = json.loads(text)
		line = obj.get("line")
		seen.add(line)
		if line in holds:
			if obj.get("verdict") != "holds":
				print(f"FAILED: seed {seed} line {line}: {obj.get('verdict')}, not holds")
				bad += 1
			continue
		if obj.get("verdict") != "fails":
			print(f"FAILED: seed {seed} line {line}: {obj.get('verdict')}, not fails: {text}")
			bad += 1
			continue
		point = obj["at"].split(":")[0]
		values = {}
		for item in point.split(", "):
			name, value = item.split("=")
			values[name] = F(value)  # the printed text is the exact point
		if not false_at[line](values):
			print(f"FAILED: seed {seed} line {line}: the claim is true at the printed point {point}")
			bad += 1
	if seen != set(false_at) | holds:
		print(f"FAILED: seed {seed}: lines {sorted(seen)}")
		bad += 1
print(f"{seeds} seeds, {len(false_at)} false and {len(holds)} true claims each: {bad} wrong")
sys.exit(1 if bad else 0)
PY
