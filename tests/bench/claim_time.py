#!/usr/bin/python3
# claim_time.py - the time per claim of two itox binaries side by side, on the same
# claims: the first N claims of the generated claim oracle (tests/ref/claim_oracle.py,
# its first chunk of 500 from the oracle's own seed, so the claims are the oracle's).
#
#   tests/bench/claim_time.py --before OLD/itox --after ./itox [--n 500] [--reps 5]
#                             [--callgrind] [--keep PREFIX]
#
# First each binary runs all the claims as the oracle runs them (--format=json; after an
# error the rest of the script runs again from the next line) for its verdicts, counted
# against the truth of the claims.  Then the claims both binaries answer without an
# error are one script, run by each binary alternately --reps times, minus a script of
# the prelude alone (the start of the process): the median wall and CPU time per claim
# and their ratios; with --callgrind the instructions per claim (valgrind
# --tool=callgrind, the same two scripts), which do not depend on the load of a shared
# machine.  Not a test: nothing is asserted.
import argparse
import importlib.util
import json
import os
import re
import statistics
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))


def load_oracle():
	path = os.path.join(HERE, "..", "ref", "claim_oracle.py")
	spec = importlib.util.spec_from_file_location("claim_oracle", path)
	module = importlib.util.module_from_spec(spec)
	spec.loader.exec_module(module)
	return module


def run(oracle, binary, claims):
	"""(seconds, {index: result object}) of one binary over the claims."""
	oracle.ITOX = binary
	results, _status, seconds, _errors = oracle.run_batch([c.text for c in claims])
	return seconds, results


def verdict(obj):
	if obj is None or obj.get("kind") != "claim":
		return "error"
	return obj.get("verdict") or ("holds" if obj.get("holds") else "fails")


def tally(claims, results):
	counts = {}
	for i, c in enumerate(claims):
		v = verdict(results.get(i))
		key = ("true" if c.truth else "false", v)
		counts[key] = counts.get(key, 0) + 1
	return counts


def instructions(binary, script, keep=None):
	out = keep or tempfile.mktemp(prefix="claim-time-", suffix=".callgrind")
	proc = subprocess.run(["valgrind", "--tool=callgrind", "--callgrind-out-file=" + out, binary,
	                       "--format=json", script], capture_output=True, text=True)
	found = re.search(r"Collected : (\d+)", proc.stderr)
	if not keep and os.path.exists(out):
		os.unlink(out)
	return int(found.group(1)) if found else None


def script_of(oracle, lines):
	fd, path = tempfile.mkstemp(suffix=".itox", prefix="claim-time-")
	with os.fdopen(fd, "w") as out:
		out.write("\n".join(oracle.PRELUDE + lines) + "\n")
	return path


def timed(binary, script):
	"""(wall seconds, CPU seconds of the child) of one run."""
	began = time.perf_counter()
	proc = subprocess.Popen([binary, "--format=json", script], stdout=subprocess.DEVNULL,
	                        stderr=subprocess.DEVNULL)
	_pid, _status, usage = os.wait4(proc.pid, 0)
	proc.returncode = 0
	return time.perf_counter() - began, usage.ru_utime + usage.ru_stime


def main():
	parser = argparse.ArgumentParser()
	parser.add_argument("--before", required=True)
	parser.add_argument("--after", required=True)
	parser.add_argument("--n", type=int, default=500)
	parser.add_argument("--reps", type=int, default=5)
	parser.add_argument("--callgrind", action="store_true")
	parser.add_argument("--keep", help="keep the callgrind outputs as KEEP.before and KEEP.after")
	args = parser.parse_args()
	oracle = load_oracle()
	began = time.time()
	claims, _checks = oracle.generate(args.n, oracle.SEED * 1000, False)
	print("generated %d claims of the oracle in %.1f s" % (len(claims), time.time() - began))
	binaries = {"before": os.path.abspath(args.before), "after": os.path.abspath(args.after)}
	results = {}
	for name, binary in binaries.items():
		_seconds, results[name] = run(oracle, binary, claims)
		counts = tally(claims, results[name])
		print("%-6s %s" % (name, "; ".join("%s claims %s: %d" % (k[0], k[1], n)
		                                   for k, n in sorted(counts.items()))))
	both = [claims[i].text for i in range(len(claims))
	        if verdict(results["before"].get(i)) != "error" and verdict(results["after"].get(i)) != "error"]
	script, empty = script_of(oracle, both), script_of(oracle, [])
	print("timed: the %d claims both answer, one process each, minus the prelude alone; "
	      "median of %d runs" % (len(both), args.reps))
	wall = {name: [] for name in binaries}
	cpu = {name: [] for name in binaries}
	for _ in range(args.reps):
		for name, binary in binaries.items():
			w, c = timed(binary, script)
			w0, c0 = timed(binary, empty)
			wall[name].append((w - w0) / len(both) * 1000)
			cpu[name].append((c - c0) / len(both) * 1000)
	for name in binaries:
		print("%-6s wall %.3f ms per claim, CPU %.3f ms per claim (wall runs: %s)" % (
			name, statistics.median(wall[name]), statistics.median(cpu[name]),
			", ".join("%.3f" % w for w in wall[name])))
	print("after / before: wall %.2f, CPU %.2f" % (
		statistics.median(wall["after"]) / statistics.median(wall["before"]),
		statistics.median(cpu["after"]) / statistics.median(cpu["before"])))
	if args.callgrind:
		ir = {}
		for name, binary in binaries.items():
			keep = "%s.%s" % (args.keep, name) if args.keep else None
			total, base = instructions(binary, script, keep), instructions(binary, empty)
			ir[name] = (total - base) / len(both) if total and base else None
			print("%-6s %.3f M instructions per claim (callgrind)" % (name, ir[name] / 1e6))
		if ir["before"] and ir["after"]:
			print("instructions after / before: %.2f" % (ir["after"] / ir["before"]))
	os.unlink(script)
	os.unlink(empty)
	return 0


if __name__ == "__main__":
	sys.exit(main())
