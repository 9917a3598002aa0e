"""The C output compiles with cc and evaluates to the same numbers as the text output.

Each query of a stochastic-variance model is printed twice by itox: in C
(--format=c, one translation unit with a function per result: a differential
fills *drift and *diffusion_NOISE, a scalar is returned) and in JSON (text
syntax).  The unit is compiled with cc -std=c99 -Wall -Werror, linked with a
driver that calls every function at a fixed point (arguments found by name in
each function's own signature); the text expressions are evaluated at the
same point by SymPy (an independent parser and evaluator).  Every pair must
agree.
Common practice, no source: this only checks that two writers of one result
agree numerically.
"""
import json
import math
import os
import re
import subprocess
import sys
import tempfile

try:
    import sympy
except ImportError:
    print("sympy missing: skipped")
    sys.exit(77)

ITOX = os.environ.get("ITOX", "./itox")
MODEL = """\
param mu, kappa, theta, xi, r, K, sigma1, sigma2 > 0
param rho in [-1, 1]
assume S > 0, v > 0, S1 > 0, S2 > 0
noise W, B
corr(W, B) = rho
dS = mu*S*dt + sqrt(v)*S*dW
dv = kappa*(theta - v)*dt + xi*sqrt(v)*dB
dS1 = mu*S1*dt + sigma1*S1*dW
dS2 = r*S2*dt + sigma2*S2*dB
func F(t)
func G(t, v)
"""
QUERIES = [
    "d log(S)", "d sqrt(v)", "d S1/S2", "d S^(3/2)*exp(-r*t)", "drift Phi(log(S/K)/sqrt(v))",
    "generator S^2*v", "qv log(S), v", "d(S)*d(v)", "diffusion log(S1*S2)",
    "d log(S + K)*abs(K - 1)", "d erf(v) + tanh(S)", "d v^(-1/3)", "partial(phi(log(S))/v, S, v)",
    "coefficients kappa*(v + S)^2 + S*v^3/theta in v", "moments v, 2",
    # generic functions: the unit declares them and their partials for the
    # caller, who supplies GENERIC below; the text names them without arguments
    "F(t)*S", "d F(t)*G(t, v)", "generator F(t)*exp(-G(t, v)*S)", "forward p(t, v)",
]
# Concrete generic functions for the driver (C) and the same values for the
# text (SymPy at POINT): F(t) = exp(3/10 t), G(t, v) = t v^2 + v,
# p(t, v) = (1 + t) exp(-v); each partial by hand.
GENERIC = {
    "F": ("exp(0.3*a0)", "exp(3*t/10)"), "F_t": ("0.3*exp(0.3*a0)", "3*exp(3*t/10)/10"),
    "G": ("a0*a1*a1 + a1", "t*v**2 + v"), "G_t": ("a1*a1", "v**2"),
    "G_v": ("2*a0*a1 + 1", "2*t*v + 1"), "G_vv": ("2*a0", "2*t"),
    "p": ("(1 + a0)*exp(-a1)", "(1 + t)*exp(-v)"), "p_v": ("-(1 + a0)*exp(-a1)", "-(1 + t)*exp(-v)"),
    "p_vv": ("(1 + a0)*exp(-a1)", "(1 + t)*exp(-v)"),
}
POINT = {"mu": 0.07, "kappa": 1.3, "theta": 0.04, "xi": 0.5, "r": 0.02, "K": 95.0,
         "sigma1": 0.25, "sigma2": 0.15, "rho": -0.6, "S": 101.5, "v": 0.035,
         "S1": 12.0, "S2": 7.5, "t": 0.25, "W": 0.3, "B": -0.2, "m1": 0.03, "m2": 0.002}


def run(fmt):
    src = MODEL + "\n".join(QUERIES) + "\n"
    out = subprocess.run([ITOX, "--format=" + fmt], input=src, capture_output=True, text=True)
    if out.returncode != 0:
        print(out.stderr)
        sys.exit(1)
    return out.stdout


def sympy_value(text):
    names = {n: sympy.Symbol(n) for n in POINT}
    names.update({"Phi": lambda x: (1 + sympy.erf(x / sympy.sqrt(2))) / 2,
                  "phi": lambda x: sympy.exp(-x ** 2 / 2) / sympy.sqrt(2 * sympy.pi),
                  "abs": sympy.Abs, "erf": sympy.erf, "tanh": sympy.tanh,
                  "log": sympy.log, "exp": sympy.exp, "sqrt": sympy.sqrt})
    names.update({g: sympy.sympify(v[1], locals={n: names[n] for n in ("t", "v")})
                  for g, v in GENERIC.items()})
    e = sympy.sympify(text.replace("^", "**"), locals=names)
    return float(e.subs({names[k]: v for k, v in POINT.items()}).evalf(30))


def parts(obj):
    """The C functions of one JSON result: rows results fill out[] (moments: the
    equations, then the solution); every other one is one function."""
    if obj["kind"] == "coefficients":
        return [dict(obj, rows=list(obj["coefficients"].values()))]
    if obj["kind"] == "moments":
        return [dict(obj, rows=[obj["equations"][k] for k in sorted(obj["equations"], key=int)]),
                dict(obj, rows=[obj["solution"][k] for k in sorted(obj["solution"], key=int)])]
    return [obj]


def main():
    c_text = run("c")
    blocks = re.split(r"^/\*.*\*/$", c_text, flags=re.M)[1:]
    json_lines = [json.loads(l) for l in run("json").splitlines() if l.strip()]
    queries = [q for q, obj in zip(QUERIES, json_lines) for _ in parts(obj)]
    json_lines = [part for obj in json_lines for part in parts(obj)]
    if len(blocks) != len(json_lines):
        print("block count differs:", len(blocks), len(json_lines))
        return 1
    functions = re.findall(r"^(void|double) (\w+)\(([^)]*)\)$", c_text, flags=re.M)
    if len(functions) != len(json_lines):
        print("function count differs:", len(functions), len(json_lines))
        return 1
    expected, program = [], []
    for i, ((ret, fname, params), obj) in enumerate(zip(functions, json_lines)):
        args, outputs = [], []
        rows = obj.get("rows")
        for param in params.split(", "):
            ctype, name = param.rsplit(" ", 1)
            if ctype == "double *":
                ctype, name = "double *", name
            if name == "*out" and rows is not None:
                args.append("out")
            elif name.startswith("*"):
                outputs.append(name[1:])
                args.append("&" + name[1:])
            else:
                args.append(repr(POINT[name]))
        texts = {"drift": obj.get("drift", "0")}  # a diffusion result fills a zero drift
        for k in (o[len("diffusion_"):] for o in outputs if o.startswith("diffusion_")):
            texts["diffusion_" + k] = obj.get("diffusion", {}).get(k, "0")
        if "value" in obj:
            texts["value"] = obj["value"]
        if "rhs" in obj:  # forward: the C function returns the right side of p_t = ...
            texts["value"] = obj["rhs"]
        program.append("  {")
        if rows is not None:
            program.append("    double out[%d];" % len(rows))
            program.append(f"    {fname}({', '.join(args)});")
            for k, text in enumerate(rows):
                program.append(f'    printf("%.17g\\n", out[{k}]);')
                expected.append((queries[i], "out[%d]" % k, sympy_value(text)))
        elif ret == "void":
            program.append("    double " + ", ".join(outputs) + ";")
            program.append(f"    {fname}({', '.join(args)});")
            names = outputs
        else:
            program.append(f"    double value = {fname}({', '.join(args)});")
            names = ["value"]
        for name in names if rows is None else []:
            program.append(f'    printf("%.17g\\n", {name});')
            expected.append((queries[i], name, sympy_value(texts[name])))
        program.append("  }")
    # every generic function or partial the unit declares is one the caller
    # supplies: the closing comment lists it, and the driver defines it
    declared = re.findall(r"^double (\w+)\(((?:double(?:, )?)*)\); /\* (.*) \*/$", c_text, flags=re.M)
    closing = re.search(r"The caller supplies these functions[^:]*:(.*?)\*/", c_text, flags=re.S)
    listed = set(re.findall(r"\w+", closing.group(1))) if closing else set()
    definitions = []
    for gname, gparams, note in declared:
        if "the caller supplies it" not in note or gname not in listed:
            print("FAIL %s: declared without saying the caller supplies it (%r)" % (gname, note))
            return 1
        if gname not in GENERIC:
            print("FAIL %s: no concrete definition in the test" % gname)
            return 1
        count = gparams.count("double")
        args = ", ".join("double a%d" % k for k in range(count))
        definitions.append("double %s(%s) { return %s; }" % (gname, args, GENERIC[gname][0]))
    if not {"F", "F_t", "G", "G_v", "p", "p_v"} <= {g for g, _, _ in declared}:
        print("FAIL: the generic functions were not all declared: %s" % [g for g, _, _ in declared])
        return 1
    source = ("#include <stdio.h>\n" + c_text + "\n" + "\n".join(definitions) +
              "\nint main(void)\n{\n" +
              "\n".join(program) + "\n  return 0;\n}\n")
    with tempfile.TemporaryDirectory() as d:
        path = os.path.join(d, "coefficients.c")
        with open(path, "w") as f:
            f.write(source)
        exe = os.path.join(d, "coefficients")
        cc = subprocess.run(["cc", "-std=c99", "-D_XOPEN_SOURCE=700", "-Wall", "-Werror",
                             path, "-o", exe, "-lm"],
                            capture_output=True, text=True)
        if cc.returncode != 0:
            print(source)
            print(cc.stderr)
            return 1
        values = [float(x) for x in subprocess.run([exe], capture_output=True, text=True).stdout.split()]
    passed = failed = 0
    for (query, name, want), got in zip(expected, values):
        if math.isclose(got, want, rel_tol=1e-10, abs_tol=1e-12):
            passed += 1
        else:
            failed += 1
            print(f"DIFFERS {query} {name}: C {got!r}, text {want!r}")
    print(f"{passed} passed, {failed} failed")
    return 1 if failed or not passed else 0


sys.exit(main())
