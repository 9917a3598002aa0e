/* help.c - help texts, one row per topic, each with a runnable example. */
#include "help.h"

#include <stddef.h>
#include <string.h>

#define HELP_TOPICS(X)                                                                            \
	X("param", "param NAME, ...  |  param NAME in [LO, HI]  |  param NAME, ... > 0\n"           \
		   "  Declare real constants, optionally with a range or a sign.\n"                   \
		   "  example:  param mu, sigma > 0\n")                                              \
	X("assume", "assume NAME > 0, NAME >= 0, NAME in [LO, HI], EXPR > EXPR (or >=, <, <=)\n"      \
		    "  Positivity or a range; simplification rules such as log(x*y) = log x + log y\n" \
		    "  fire only under them.  A relation between two expressions (assume T > t,\n"    \
		    "  assume 2*kappa*theta > xi^2) restricts the points claims are tested at.\n"     \
		    "  example:  assume S > 0\n")                                                      \
	X("noise", "noise NAME, ...\n"                                                                \
		   "  Independent standard Brownian motions; dNAME is the increment.\n"               \
		   "  example:  noise W, B\n")                                                        \
	X("corr", "corr(W, B) = EXPR\n"                                                               \
		  "  Correlation of two noises: dW*dB = EXPR*dt (default 0).\n"                       \
		  "  example:  corr(W, B) = rho\n")                                                   \
	X("func", "func NAME(ARG, ...)\n"                                                             \
		  "  An unknown smooth function; its partials print as f_x, f_tx.\n"                  \
		  "  example:  func f(t, x)\n")                                                       \
	X("sde", "dX = DRIFT*dt + DIFFUSION*dW + ...\n"                                               \
		 "  An Ito SDE; it declares the state X.\n"                                           \
		 "  example:  dS = mu*S*dt + sigma*S*dW\n")                                           \
	X("let", "let NAME = EXPR  |  let NAME = EXPR under Q\n"                                     \
		 "  A named derived process.  Queries inside EXPR (drift(P), ...) are taken\n"       \
		 "  when it is defined, under Q if given: the name holds that value.\n"             \
		 "  example:  let Y = log(S)\n")                                                       \
	X("functions", "exp log sqrt sin cos tan sinh cosh tanh erf Phi phi abs\n"                     \
		       "  Built-in functions (Phi: standard normal distribution function, phi: its\n"  \
		       "  density; sqrt(x) is x^(1/2)).  Their names are reserved: no declaration\n"  \
		       "  may use them.  example:  Phi(0)\n")                                          \
	X("d", "d EXPR\n"                                                                             \
	       "  The Ito differential: d(EXPR) = (drift)*dt + (b1)*dW + ...\n"                       \
	       "  d(EXPR) before a parenthesis is the operator, so d(S)*d(S) is a product.\n"         \
	       "  example:  d log(S)\n")                                                              \
	X("drift", "drift EXPR  |  drift(EXPR)\n"                                                  \
		   "  The dt part of d EXPR.  Written with '(' directly after the word it is a\n"    \
		   "  function usable in any expression (drift(S)/S, let D = drift(S)); with a\n"    \
		   "  space or no parenthesis it takes the rest of the statement, so drift (S)/S\n"  \
		   "  is the drift of S/S.  example:  drift(S^2)/S^2\n")                            \
	X("diffusion", "diffusion EXPR  |  diffusion(EXPR)  |  diffusion(EXPR, NOISE)\n"            \
		       "  The noise parts of d EXPR; diffusion(EXPR, W) is the coefficient of dW,\n" \
		       "  usable in expressions (see help drift for the parenthesis rule).\n"       \
		       "  example:  diffusion(log(S), W)/sigma\n")                                 \
	X("generator", "generator EXPR  |  generator(EXPR)\n"                                        \
		       "  The generator applied to EXPR; generator(EXPR) is a function usable in\n"  \
		       "  expressions (claim generator(V) - r*V = 0; see help drift).\n"           \
		       "  example:  generator(S^2) - 2*mu*S^2\n")                                  \
	X("qv", "qv EXPR  |  qv EXPR, EXPR  |  qv(EXPR)  |  qv(EXPR, EXPR)\n"                        \
		"  Quadratic variation rate d<X>/dt, or covariation rate d<X,Y>/dt; qv(...)\n"      \
		"  is a function usable in expressions (see help drift).\n"                        \
		"  example:  qv(log(S))/sigma^2\n")                                                 \
	X("pde", "pde V(t, S) [discount EXPR]\n"                                                      \
		 "  The backward equation V_t + L V - r V = 0 that makes the discounted V\n"          \
		 "  a martingale.  The arguments must include every state that enters the SDE\n"    \
		 "  of a listed state or the discount (else an error names the missing one).\n"    \
		 "  example:  pde V(t, S) discount r\n")                                              \
	X("coefficients", "coefficients EXPR in x [, y ...]\n"                                      \
			  "  EXPR, after the rational normal form, as a polynomial in x, y: one line per\n" \
			  "  monomial (1: ..., x: ..., x^2: ...), or an error naming a term that is not\n" \
			  "  polynomial in them.  With an exponential-affine guess P = A(t)*exp(-B(t)*r),\n" \
			  "  coefficients (drift(P) - r*P)/P in r gives the ODEs for A and B.\n"          \
			  "  example:  coefficients (S + 1)^2*mu in S\n")                                 \
	X("forward", "forward p(t, X, ...)\n"                                                        \
		     "  The forward (Fokker-Planck) equation of the transition density in the\n"     \
		     "  listed states: p_t = -sum_i d_i(mu_i p) + 1/2 sum_ij d_i d_j(C_ij p),\n"       \
		     "  expanded; under a measure too.  The arguments must include every state\n"    \
		     "  that enters a listed state's SDE.  example:  forward p(t, S)\n")             \
	X("moments", "moments X, K\n"                                                                \
		     "  For a state with drift of degree <= 1 and squared diffusion of degree <= 2\n" \
		     "  in X: the linear ODEs of m_k(t) = E[X_t^k | X_0 = X], k = 1..K (m1' = ...),\n" \
		     "  and, when the coefficients do not depend on t, their solution in X and t\n"  \
		     "  (m1 = ...).  Any other state is an error saying why the system does not\n"  \
		     "  close (K = 1 needs only the drift).  example:  moments S, 2\n")                \
	X("sde", "sde X  |  sde X stratonovich\n"                                                   \
		 "  The SDE of the state X in Ito form, or in Stratonovich form.\n"                  \
		 "  example:  sde X stratonovich\n")                                                 \
	X("stratonovich", "stratonovich dX = ...\n"                                                 \
			  "  Declare a state by its SDE in Stratonovich form (sde X stratonovich\n"  \
			  "  shows any state in that form).\n"                                        \
			  "  example:  stratonovich dX = a*X*dt + b*X*dW\n")                          \
	X("measure", "measure Q: dW = dZ - lambda*dt, ...\n"                                          \
		     "  A change of measure (Girsanov): Z is a Brownian motion under Q.  Noises\n"    \
		     "  correlated with a listed one get the implied shift.  Z must be a new name\n"  \
		     "  (not W, nor a declared one).\n"                                               \
		     "  example:  measure Q: dW = dZ - lambda*dt\n")                                  \
	X("under", "QUERY under Q\n  Any query, taken under the measure Q.  example:  d S under Q\n") \
	X("state", "state NEW = EXPR where OLD = INVERSE\n"                                           \
		   "  Replace a state by a new one; the model is rewritten in it.\n"                  \
		   "  example:  state x = log(S) where S = exp(x)\n")                                 \
	X("claim", "claim LHS = RHS\n"                                                                \
		   "  Verify an identity of expressions or differentials: exact comparison of\n"      \
		   "  canonical forms, then certified ball arithmetic at points of the declared\n"    \
		   "  domain.  Verdicts: holds, fails (with a counterexample) or undecided (with\n"   \
		   "  the reason).  A failed or undecided claim makes the exit status 1.  In the\n"  \
		   "  numeric test, an unknown function (func) and each of its partials is a\n"      \
		   "  random smooth function of its arguments' values, fixed for the seed.\n"        \
		   "  example:  claim d log(S) = (mu - sigma^2/2)*dt + sigma*dW\n")                   \
	X("check", "check [d] EXPR [= DIFFERENTIAL] at NAME=VALUE, ... [over T=1, steps=..., paths=...]\n" \
		   "      [where FUNC(ARGS) = EXPR, ...] [verbose]\n"                                   \
		   "  A numerical cross-check by finite differences (in ball arithmetic) and\n"      \
		   "  simulated paths on three grids, whose changes give the discretisation bias\n"   \
		   "  that the tolerance includes; a grid too coarse to judge (one path dominating\n" \
		   "  a statistic, or a mean covered only by the bias) is refined, doubling the\n"   \
		   "  steps up to the work of a default check.  Verdicts: consistent, inconsistent\n"\
		   "  (evidence against the differential) or undecided (the experiment cannot\n"     \
		   "  judge: paths left the domain or overflowed, too few paths or steps, a value\n" \
		   "  beyond double precision, heavy tails that trimming the dominant paths does\n"\
		   "  not tame), each with its reason; only consistent exits 0.  where gives a\n"   \
		   "  generic function a concrete form for the check; the differential keeps the\n"\
		   "  generic partials and the check evaluates them from that form.\n"             \
		   "  example:  check d log(S) at S=100, mu=0.05, sigma=0.2\n")                       \
	X("partial", "partial(EXPR, x [, y ...])\n  A partial derivative.  example:  partial(S^3, S)\n") \
	X("show", "show [NAME]\n  The model (or one name) as a script.  example:  show\n")           \
	X("save", "save FILE\n  Write the model as a script that load reproduces.  example:  save note-model.itox\n") \
	X("load", "load FILE\n  Run a script in this session.  example:  load note-model.itox\n")          \
	X("forget", "forget NAME\n"                                                                  \
		    "  Remove a declaration that nothing else uses (or say what uses it).  In the\n"   \
		    "  REPL, declaring an SDE, a parameter's domain, a correlation, a let or a\n"     \
		    "  measure again replaces the old one and says so; in a script that is an\n"    \
		    "  error.  Results printed before are not changed.  example:  forget Q\n")      \
	X("format", "format text|latex|c|json\n"                                                     \
		    "  The output format.  text: each result with its left side (drift(X) = ...),\n" \
		    "  claims and checks with their place (model.itox:12: claim holds (exact)).\n"   \
		    "  latex: display math (itox --format=latex --standalone FILE: a document).\n"  \
		    "  c: one C99 unit, a function per result (d log(S) -> d_log_S).\n"             \
		    "  json: one object per result.  example:  format latex\n")                     \
	X("help", "help [TOPIC]\n  This text.  example:  help claim\n")                               \
	X("quit", "quit\n  Leave (Ctrl-D too).  example:  quit\n")

typedef struct help_row {
	const char *topic, *text;
} help_row;

static const help_row rows[] = {
#define HELP_ROW(topic, text) {topic, text},
	HELP_TOPICS(HELP_ROW)
#undef HELP_ROW
};

const char *const help_topics[] = {
#define HELP_NAME(topic, text) topic,
	HELP_TOPICS(HELP_NAME)
#undef HELP_NAME
	NULL};

static const char overview[] =
	"itox: symbolic Ito calculus.  Statements (help TOPIC for each):\n"
	"  declarations  param (in) assume noise corr func sde let measure state (where)\n"
	"                built-in function names are reserved (help functions)\n"
	"  queries       EXPR partial d drift diffusion generator qv pde (discount)\n"
	"                drift(EXPR), diffusion(EXPR, NOISE), generator(EXPR), qv(A, B)\n"
	"                are functions inside expressions: drift(S)/S\n"
	"                sde, any query followed by: under MEASURE\n"
	"  algebra       coefficients (in) forward moments\n"
	"  verification  claim check (at, over, where, verbose)\n"
	"  session       show save load forget format help quit\n"
	"Example:\n"
	"  param mu, sigma > 0\n"
	"  noise W\n"
	"  dS = mu*S*dt + sigma*S*dW\n"
	"  d log(S)\n"
	"Caution: results are mathematics, not advice.  A model's assumptions must be\n"
	"validated, and results reviewed under your own model-risk policy, before they\n"
	"are used to price or hedge anything.\n";

const char *help_text(const char *topic)
{
	if (!topic || !*topic)
		return overview;
	for (size_t i = 0; i < sizeof rows / sizeof rows[0]; i++)
		if (strcmp(rows[i].topic, topic) == 0)
			return rows[i].text;
	if (strcmp(topic, "dS") == 0 || strcmp(topic, "SDE") == 0)
		return help_text("sde");
	return NULL;
}
