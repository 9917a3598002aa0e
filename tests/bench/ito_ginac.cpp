// ito_ginac.cpp - GiNaC reference for the itox benchmarks (tests/bench/run).
//
// The same Itô drift and diffusion as itox computes, by GiNaC's own means:
// differentiate with ex::diff, assemble Itô's formula by hand, then expand()
// (Shreve, Stochastic Calculus for Finance II, 4.6, the multidimensional
// Itô-Doeblin formula, from memory):
//     df = (f_t + sum_i m_i f_i + 1/2 sum_ij C_ij f_ij) dt + sum_i s_i f_i dW_i,
//     C_ii = s_i^2, C_ij = rho_ij s_i s_j.
//
// Cases (the symbol names are those of bench_core --script and ito_sympy.py):
//   log, cube, power, discount   scalar: dS = mu*S*dt + sigma*S*dW and
//       f = log(S), S^3, S^p, exp(-r*t)*S (N is ignored);
//   b   a generic f(t, X1..Xn), dXi = mu_i dt + sig_i dWi, corr(Wi, Wj) = rho_i_j;
//   c   f = exp(a1*X1 + ... + an*Xn)*X1*...*Xn, dXi = kap_i*(th_i - Xi) dt + sig_i dWi.
//
// Case b: GiNaC's symbolic functions take at most 14 arguments (its function
// registry), which f(t, X1..X40) exceeds, so the partials of the generic f
// are represented by distinct symbols named as itox prints them, f_{t},
// f_{X1}, f_{X1,X2} (i <= j); Itô's formula is then assembled from these
// symbols and expanded.  There is nothing to differentiate in case b: the
// work is assembling and expanding the n(n+1)/2 second-order terms.
//
// Usage: ito_ginac time CASE N [REPS [TIMEOUT]]   prints "SECONDS TERMS" (the
//            median over REPS fresh repetitions, terms of the expanded drift)
//            then "PRINTED": the median of the same computation followed by
//            printing the drift and diffusions into a string (to set beside
//            itox's query, which prints), or "timeout";
//        ito_ginac json CASE N   prints {"drift":"...","diffusion":{"W1":"..."}}
//            in the text syntax of itox (checked by ito_sympy.py / ito_scalar.py).
#include <ginac/ginac.h>

#include <algorithm>
#include <chrono>
#include <csignal>
#include <cstdlib>
#include <iostream>
#include <sstream>
#include <string>
#include <unistd.h>
#include <vector>

using namespace GiNaC;

namespace {

struct ito_result {
	ex drift;
	std::vector<ex> diffusion;
	std::vector<std::string> noises;
};

std::string name(const char *stem, int i)
{
	return stem + std::to_string(i);
}

// The scalar cases under geometric Brownian motion.
ito_result scalar_case(const std::string &which)
{
	symbol S("S"), mu("mu"), sigma("sigma"), t("t"), p("p"), r("r");
	ex f;
	if (which == "log")
		f = log(S);
	else if (which == "cube")
		f = pow(S, 3);
	else if (which == "power")
		f = pow(S, p);
	else
		f = exp(-r * t) * S;
	ex fs = f.diff(S);
	ex drift = f.diff(t) + mu * S * fs + numeric(1, 2) * pow(sigma, 2) * pow(S, 2) * fs.diff(S);
	return {drift.expand(), {(sigma * S * fs).expand()}, {"W"}};
}

// C_ij of case b or c: sig_i^2 on the diagonal, rho_i_j sig_i sig_j off it.
ex covariance(const std::vector<symbol> &sig, const std::vector<std::vector<symbol>> &rho, int i, int j)
{
	return i == j ? pow(sig[i], 2) : rho[std::min(i, j)][std::max(i, j)] * sig[i] * sig[j];
}

ito_result state_case(char which, int n)
{
	symbol t("t");
	std::vector<symbol> X, sig;
	std::vector<std::vector<symbol>> rho(n, std::vector<symbol>(n));
	for (int i = 1; i <= n; i++) {
		X.emplace_back(name("X", i));
		sig.emplace_back(name("sig", i));
	}
	for (int i = 0; i < n; i++)
		for (int j = i + 1; j < n; j++)
			rho[i][j] = symbol("rho_" + std::to_string(i + 1) + "_" + std::to_string(j + 1));
	std::vector<ex> drifts, first(n);
	std::vector<std::vector<ex>> second(n, std::vector<ex>(n));
	ex f_t;
	if (which == 'b') {
		// the partials of the generic f, as symbols (see the note at the top)
		f_t = symbol("f_{t}");
		for (int i = 0; i < n; i++) {
			drifts.push_back(symbol(name("mu", i + 1)));
			first[i] = symbol("f_{" + name("X", i + 1) + "}");
			for (int j = i; j < n; j++)
				second[i][j] = symbol("f_{" + name("X", i + 1) + "," + name("X", j + 1) + "}");
		}
	} else {
		ex sum = 0, product = 1;
		for (int i = 0; i < n; i++) {
			symbol kap(name("kap", i + 1)), th(name("th", i + 1)), a(name("a", i + 1));
			drifts.push_back(kap * (th - X[i]));
			sum += a * X[i];
			product *= X[i];
		}
		ex f = exp(sum) * product;
		f_t = f.diff(t);
		for (int i = 0; i < n; i++) {
			first[i] = f.diff(X[i]);
			for (int j = i; j < n; j++)
				second[i][j] = first[i].diff(X[j]);
		}
	}
	ex drift = f_t;
	for (int i = 0; i < n; i++)
		drift += drifts[i] * first[i];
	for (int i = 0; i < n; i++)
		for (int j = i; j < n; j++) {
			ex weight = i == j ? numeric(1, 2) : numeric(1);
			drift += weight * covariance(sig, rho, i, j) * second[i][j];
		}
	ito_result result{drift.expand(), {}, {}};
	for (int i = 0; i < n; i++) {
		result.diffusion.push_back((sig[i] * first[i]).expand());
		result.noises.push_back(name("W", i + 1));
	}
	return result;
}

ito_result compute(const std::string &which, int n)
{
	if (which == "b" || which == "c")
		return state_case(which[0], n);
	return scalar_case(which);
}

bool known_case(const std::string &which)
{
	for (const char *c : {"log", "cube", "power", "discount", "b", "c"})
		if (which == c)
			return true;
	return false;
}

std::string json_string(const ex &e)
{
	std::ostringstream text;
	text << e; // GiNaC's default output: a*b, a^b, 1/2: the itox text syntax
	std::string s = "\"";
	for (char c : text.str())
		s += c == '"' || c == '\\' ? std::string("\\") + c : std::string(1, c);
	return s + "\"";
}

void print_json(const ito_result &r)
{
	std::cout << "{\"drift\":" << json_string(r.drift) << ",\"diffusion\":{";
	for (size_t k = 0; k < r.diffusion.size(); k++)
		std::cout << (k ? "," : "") << "\"" << r.noises[k] << "\":" << json_string(r.diffusion[k]);
	std::cout << "}}\n";
}

double median(std::vector<double> v)
{
	std::sort(v.begin(), v.end());
	size_t m = v.size();
	return m % 2 ? v[m / 2] : 0.5 * (v[m / 2 - 1] + v[m / 2]);
}

void on_alarm(int)
{
	static const char message[] = "timeout\n";
	ssize_t ignored = write(1, message, sizeof message - 1);
	(void)ignored;
	_exit(0);
}

int time_case(const std::string &which, int n, int reps, int timeout)
{
	std::signal(SIGALRM, on_alarm);
	alarm((unsigned)timeout);
	std::vector<double> times, printed;
	double spent = 0;
	size_t terms = 0, length = 0;
	for (int k = 0; k < reps && (k == 0 || spent < timeout / 8.0); k++) {
		auto start = std::chrono::steady_clock::now();
		ito_result r = compute(which, n);
		auto end = std::chrono::steady_clock::now();
		double seconds = std::chrono::duration<double>(end - start).count();
		times.push_back(seconds);
		spent += seconds;
		terms = is_a<add>(r.drift) ? r.drift.nops() : 1;
	}
	for (int k = 0; k < reps && (k == 0 || spent < timeout / 4.0); k++) {
		auto start = std::chrono::steady_clock::now();
		ito_result r = compute(which, n);
		std::ostringstream text;
		text << r.drift << "\n";
		for (const ex &e : r.diffusion)
			text << e << "\n";
		length += text.str().size();
		auto end = std::chrono::steady_clock::now();
		double seconds = std::chrono::duration<double>(end - start).count();
		printed.push_back(seconds);
		spent += seconds;
	}
	alarm(0);
	std::cout << median(times) << " " << terms << " " << median(printed) << "\n";
	return length == 0; // the printout is used, so it is not optimised away
}

int usage()
{
	std::cerr << "usage: ito_ginac time CASE N [REPS [TIMEOUT]] | ito_ginac json CASE N\n"
	             "CASE: log, cube, power, discount (scalar; N ignored), b, c\n";
	return 2;
}

} // namespace

int main(int argc, char **argv)
{
	if (argc < 4)
		return usage();
	std::string mode = argv[1], which = argv[2];
	int n = std::atoi(argv[3]);
	if (!known_case(which) || n < 1)
		return usage();
	if (mode == "json") {
		print_json(compute(which, n));
		return 0;
	}
	if (mode != "time")
		return usage();
	int reps = argc > 4 ? std::atoi(argv[4]) : 5;
	int timeout = argc > 5 ? std::atoi(argv[5]) : 60;
	return time_case(which, n, reps < 1 ? 1 : reps, timeout < 1 ? 1 : timeout);
}
