"""The C output gives real odd roots of negative numbers and accurate normal tails.

Two ways a faithful C transcription of a right formula gives a wrong number:

Real roots.  itox reads u^(p/q) with q odd as the real root raised to p
((-8)^(1/3) = -2; LANGUAGE.md, and a claim holds it), but C's pow(u, 1.0/3.0)
is NaN for u < 0.  The reference is the real root sign(u)*|u|^(1/q) raised to p,
in 50-digit mpmath (the real-root convention: common practice, no source).

Tails.  The canonical form writes Phi(-a) as 1 - Phi(a) and 1 - erf(a) stays
as it is, which in doubles is 0 from about a = 8.3 (resp. 5.9) on.  The reference is
mpmath's ncdf and erfc at 50 digits (mpmath documentation: ncdf is the normal
distribution function, erfc the complementary error function); Phi(-30) is
4.9e-198, still a normal double.

The script (an invented model) is printed by itox --format=c, compiled with
cc -std=c99 -Wall -Werror and linked to a driver that calls each function at
its points (argument names read from each function's own signature); every
value must be within relative 1e-12 of the reference.
"""
import os
import re
import subprocess
import sys
import tempfile

try:
    import mpmath
except ImportError:
    print("mpmath missing: skipped")
    sys.exit(77)

mpmath.mp.dps = 50
ITOX = os.environ.get("ITOX", "./itox")

MODEL = """\
param a, c
param b, K > 0
noise W
dX = a^(1/3)*dt + a^(2/3)*dW
"""


def real_root(u, p, q):
    """The real q-th root of u (q odd), raised to p."""
    u = mpmath.mpf(u)
    root = mpmath.sign(u) * abs(u) ** (mpmath.mpf(1) / q)
    return root ** p


Phi = mpmath.ncdf
erfc = mpmath.erfc
# negative bases, small and large, and positive ones (which must not change)
ROOT_POINTS = [{"a": -8.0, "c": 3.5}, {"a": -27.5, "c": -2.25}, {"a": -0.3, "c": 0.125},
               {"a": -1.0e-3, "c": -40.0}, {"a": 5.0, "c": 9.0}, {"a": 0.7, "c": -0.5}]
# far tails: Phi(-a) at a = 5, 10, 20, 30 (Phi(-30) = 4.9e-198)
TAIL_POINTS = [{"a": x, "c": -x, "b": x / 2} for x in (5.0, 10.0, 20.0, 30.0)]
# erfc(30) = 2.6e-393 is below the doubles: erfc(26) = 5.7e-296 is the last
ERF_POINTS = [{"a": x, "c": -x, "b": x / 2} for x in (5.0, 10.0, 20.0, 26.0)]
# (statement, output name, reference, points); the output is "value" for a
# scalar result, "drift" or "diffusion_W" for a differential
CASES = [
    ("a^(1/3)", "value", lambda v: real_root(v["a"], 1, 3), ROOT_POINTS),
    ("a^(2/3)", "value", lambda v: real_root(v["a"], 2, 3), ROOT_POINTS),
    ("a^(5/3)", "value", lambda v: real_root(v["a"], 5, 3), ROOT_POINTS),
    ("a^(-1/3)", "value", lambda v: real_root(v["a"], -1, 3), ROOT_POINTS),
    ("a^(-4/3)*c", "value", lambda v: real_root(v["a"], -4, 3) * v["c"], ROOT_POINTS),
    ("a^(1/5)", "value", lambda v: real_root(v["a"], 1, 5), ROOT_POINTS),
    ("a^(2/5)", "value", lambda v: real_root(v["a"], 2, 5), ROOT_POINTS),
    ("a^(3/5)", "value", lambda v: real_root(v["a"], 3, 5), ROOT_POINTS),
    ("a^(-3/5)", "value", lambda v: real_root(v["a"], -3, 5), ROOT_POINTS),
    ("a^(1/7)", "value", lambda v: real_root(v["a"], 1, 7), ROOT_POINTS),
    ("(a - c)^(1/3)", "value", lambda v: real_root(v["a"] - v["c"], 1, 3), ROOT_POINTS),
    ("(a*c + a)^(4/5)", "value", lambda v: real_root(v["a"] * v["c"] + v["a"], 4, 5), ROOT_POINTS),
    ("b^(1/3)*a^(1/3)", "value", lambda v: real_root(v["b"], 1, 3) * real_root(v["a"], 1, 3), ROOT_POINTS),
    ("sde X", "drift", lambda v: real_root(v["a"], 1, 3), ROOT_POINTS),
    ("sde X", "diffusion_W", lambda v: real_root(v["a"], 2, 3), ROOT_POINTS),
    ("Phi(-a)", "value", lambda v: Phi(-v["a"]), TAIL_POINTS),
    ("3*Phi(-a)", "value", lambda v: 3 * Phi(-v["a"]), TAIL_POINTS),
    ("K*Phi(-a)/2", "value", lambda v: v["K"] * Phi(-v["a"]) / 2, TAIL_POINTS),
    ("Phi(a) - 1", "value", lambda v: Phi(v["a"]) - 1, TAIL_POINTS),
    ("Phi(-a) + Phi(-b)", "value", lambda v: Phi(-v["a"]) + Phi(-v["b"]), TAIL_POINTS),
    ("K*exp(-b)*Phi(-a) - b*Phi(-b)", "value",
     lambda v: v["K"] * mpmath.exp(-v["b"]) * Phi(-v["a"]) - v["b"] * Phi(-v["b"]), TAIL_POINTS),
    ("Phi(-a)/2 + (1 - erf(b))/3", "value", lambda v: Phi(-v["a"]) / 2 + erfc(v["b"]) / 3, TAIL_POINTS),
    ("1 - erf(a)", "value", lambda v: erfc(v["a"]), ERF_POINTS),
    ("erf(c) + 1", "value", lambda v: erfc(-v["c"]), ERF_POINTS),
    ("erf(a) - 1", "value", lambda v: -erfc(v["a"]), ERF_POINTS),
    ("b*(1 - erf(a))", "value", lambda v: v["b"] * erfc(v["a"]), ERF_POINTS),
]
DEFAULTS = {"t": 0.0, "a": -8.0, "c": 1.5, "b": 0.4, "K": 1.7, "W": 0.0, "X": 1.0}


def main():
    statements = []
    for statement, _, _, _ in CASES:
        if statement not in statements:
            statements.append(statement)
    out = subprocess.run([ITOX, "--format=c"], input=MODEL + "\n".join(statements) + "\n",
                         capture_output=True, text=True)
    if out.returncode != 0:
        print(out.stderr)
        return 1
    c_text = out.stdout
    functions = re.findall(r"^(void|double) (\w+)\(([^)]*)\)$", c_text, flags=re.M)
    if len(functions) != len(statements):
        print("function count differs:", len(functions), len(statements))
        return 1
    by_statement = dict(zip(statements, functions))
    program, expected = [], []
    for statement, output, reference, points in CASES:
        ret, fname, params = by_statement[statement]
        for point in points:
            values = dict(DEFAULTS, **point)
            args, outputs = [], []
            for param in params.split(", "):
                name = param.rsplit(" ", 1)[1]
                if name.startswith("*"):
                    outputs.append(name[1:])
                    args.append("&" + name[1:])
                else:
                    args.append(float(values[name]).hex())
            program.append("  {")
            if ret == "void":
                program.append("    double " + ", ".join(outputs) + ";")
                program.append(f"    {fname}({', '.join(args)});")
            else:
                program.append(f"    double value = {fname}({', '.join(args)});")
            program.append(f'    printf("%.17g\\n", {output});')
            program.append("  }")
            expected.append((statement, output, point, reference(values)))
    source = ("#include <stdio.h>\n" + c_text + "\nint main(void)\n{\n" + "\n".join(program) +
              "\n  return 0;\n}\n")
    with tempfile.TemporaryDirectory() as d:
        path = os.path.join(d, "roots_tails.c")
        with open(path, "w") as f:
            f.write(source)
        exe = os.path.join(d, "roots_tails")
        cc = subprocess.run(["cc", "-std=c99", "-D_XOPEN_SOURCE=700", "-Wall", "-Werror",
                             path, "-o", exe, "-lm"], capture_output=True, text=True)
        if cc.returncode != 0:
            print(source)
            print(cc.stderr)
            return 1
        got = subprocess.run([exe], capture_output=True, text=True).stdout.split()
    if len(got) != len(expected):
        print("value count differs:", len(got), len(expected))
        return 1
    passed = failed = 0
    for (statement, output, point, want), text in zip(expected, got):
        value = float(text)
        error = abs(mpmath.mpf(value) - want) / abs(want) if want else abs(value)
        if value == value and error <= 1e-12:
            passed += 1
        else:
            failed += 1
            print(f"DIFFERS {statement} {output} at {point}: C {value!r}, "
                  f"reference {mpmath.nstr(want, 17)}")
    print(f"{passed} passed, {failed} failed")
    return 1 if failed or not passed else 0


sys.exit(main())
