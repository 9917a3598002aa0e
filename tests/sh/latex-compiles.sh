#!/bin/sh
# latex-compiles.sh - every LaTeX result of a model with all query kinds must
# compile in display math with amsmath (pdflatex from Debian texlive-latex-base).
# Long results (the square-root moments at K = 2, the forward equation of a
# two-state model, a drift in parentheses wider than the page, in a result
# and in the standalone document's model) must break into lines: an Overfull \hbox wider than 20pt in
# the log fails the test, here and in the standalone document of the same
# model.  A user's parameters named e and pi (\mathit{e}, \mathit{pi}) compile too.
# Skipped (77) when pdflatex is not installed.
set -u
command -v pdflatex >/dev/null 2>&1 || { echo "pdflatex not installed: skipped"; exit 77; }
ITOX=${ITOX:-./itox}
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
cat > "$dir/model.itox" <<'MODEL'
param mu, kappa, theta, xi, r, sigma1, sigma2 > 0
param rho in [-1, 1]
assume S > 0, v > 0, S1 > 0, S2 > 0
noise W, B
corr(W, B) = rho
dS = mu*S*dt + sqrt(v)*S*dW
dv = kappa*(theta - v)*dt + xi*sqrt(v)*dB
dS1 = mu*S1*dt + sigma1*S1*dW
dS2 = r*S2*dt + sigma2*S2*dB
func f(t, x)
d log(S)
d sqrt(v)
d S1/S2
d f(t, log(S))
dS*dv
qv log(S), v
generator S^2
pde V(t, S, v) discount r
sde v
sde v stratonovich
partial(Phi(log(S)/sqrt(v)), S)
exp(-r*t)*abs(S - 1)
measure Q: dW = dZ - (mu - r)/sqrt(v)*dt
d S under Q
forward p(t, S, v)
coefficients (v + 1)^2*S + kappa in v
moments v, 2
moments v, 1 under Q
func A(t)
dx = (kappa + t*x)*dt + xi*dW
moments x, 1
noise W3
assume X > 0
dX = (kappa*(theta - X) + mu*Y*X + r*Y^2 - sigma1*X*Y*U + xi*sigma1*sigma2*U + kappa*theta*X^2*Y)*dt + sigma1*sqrt(X)*dW + sigma2*Y*dB + xi*U*X*dW3 + mu*r*X*Y*U*dW
dY = kappa*(theta - Y)*dt + sigma2*dB
dU = -r*U*dt + xi*dW3
d log(X)
param e, pi > 0
exp(-e*t)*pi + e^2 - exp(2)
MODEL
if ! "$ITOX" --format=latex "$dir/model.itox" > "$dir/lines.txt"; then
	echo "itox failed"; exit 1
fi
{
	printf '\\documentclass{article}\n\\usepackage{amsmath}\n\\begin{document}\n'
	while IFS= read -r line; do printf '\\[ %s \\]\n' "$line"; done < "$dir/lines.txt"
	printf '\\end{document}\n'
} > "$dir/doc.tex"
lines=$(wc -l < "$dir/lines.txt")
if ! "$ITOX" --format=latex --standalone "$dir/model.itox" > "$dir/standalone.tex"; then
	echo "itox --standalone failed"; exit 1
fi
fail=0
for doc in doc standalone; do
	if ! (cd "$dir" && pdflatex -interaction=nonstopmode -halt-on-error $doc.tex > $doc.out 2>&1); then
		cat "$dir/$doc.tex"
		grep -A3 '^!' "$dir/$doc.log"
		fail=1
		continue
	fi
	# "Overfull \hbox (35.2pt too wide) in paragraph at lines 12--12" (pdflatex's log)
	wide=$(sed -n 's/^Overfull \\hbox (\([0-9.]*\)pt too wide).*/\1/p' "$dir/$doc.log" |
		awk '$1 > 20 { print }')
	if [ -n "$wide" ]; then
		echo "FAIL: $doc.tex: lines run off the page by (pt):" $wide
		grep -A2 '^Overfull \\hbox' "$dir/$doc.log" | head -30
		fail=1
	fi
done
[ $fail = 0 ] && echo "$lines LaTeX results compiled, and the standalone document, none too wide"
exit $fail
