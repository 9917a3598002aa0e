/* expr.h - hash-consed expressions in canonical form.
 *
 * Ownership: every node belongs to the expr_ctx that made it and lives until
 * expr_ctx_free().  Callers never free nodes.  Nodes are immutable and unique:
 * two equal expressions are the same node, so equality is pointer equality.
 *
 * Errors are sticky values: a constructor that hits a limit (size, exponent,
 * interrupt) records the error in the context and returns NULL, and every
 * constructor given a NULL argument returns NULL.  Check expr_error() once at
 * the end of a computation.
 *
 * Canonical form (see DESIGN.md): n-ary sums of terms c*m (c rational, m a
 * coefficient-free monomial) sorted by the node order with like terms merged;
 * n-ary products c * prod b_i^e_i with distinct bases sorted and merged;
 * products over sums expanded; exp(a)*exp(b) folded into exp(a+b).
 *
 * Real powers (one convention for the simplifier, the evaluators and claim):
 * x^(p/q) in lowest terms with q odd is the real root for x < 0, so
 * (-8)^(1/3) = -2 and (-8)^(2/3) = 4; with q even it is undefined for x < 0;
 * x^s with a symbolic s is defined for x > 0 only; 0^e is undefined for e < 0.
 * A rewrite rule may fire only where it is valid: wherever its left side is
 * defined, the two sides agree (and the assumption it names holds).
 */
#ifndef ITOX_EXPR_H
#define ITOX_EXPR_H

#include <gmp.h>
#include <signal.h>
#include <stdbool.h>
#include <stddef.h>

typedef struct expr_ctx expr_ctx;
typedef struct expr expr;

#define EXPR_KINDS(X) X(NUM) X(SYM) X(ADD) X(MUL) X(FUN) X(FAPP)
typedef enum expr_kind {
#define EXPR_KIND_ENUM(name) EXPR_##name,
	EXPR_KINDS(EXPR_KIND_ENUM)
#undef EXPR_KIND_ENUM
} expr_kind;

/* Built-in functions: name, C spelling, LaTeX spelling. */
#define EXPR_BUILTINS(X)                                   \
	X(EXP, "exp", "exp", "\\exp")                      \
	X(LOG, "log", "log", "\\log")                      \
	X(SIN, "sin", "sin", "\\sin")                      \
	X(COS, "cos", "cos", "\\cos")                      \
	X(TAN, "tan", "tan", "\\tan")                      \
	X(SINH, "sinh", "sinh", "\\sinh")                  \
	X(COSH, "cosh", "cosh", "\\cosh")                  \
	X(TANH, "tanh", "tanh", "\\tanh")                  \
	X(ERF, "erf", "erf", "\\operatorname{erf}")        \
	X(NCDF, "Phi", "itox_Phi", "\\Phi")                \
	X(NPDF, "phi", "itox_phi", "\\varphi")             \
	X(ABS, "abs", "fabs", "\\operatorname{abs}")
typedef enum expr_builtin {
#define EXPR_BUILTIN_ENUM(id, name, c_name, latex) EXPR_F_##id,
	EXPR_BUILTINS(EXPR_BUILTIN_ENUM)
#undef EXPR_BUILTIN_ENUM
		EXPR_F_COUNT
} expr_builtin;

typedef enum expr_error_kind {
	EXPR_OK,
	EXPR_ERR_TOO_LARGE,   /* node count or expansion size over the limit */
	EXPR_ERR_EXPONENT,    /* an exponent or a number too large to represent */
	EXPR_ERR_DIVISION,    /* division by zero */
	EXPR_ERR_INTERRUPTED, /* the interrupt flag was raised */
	EXPR_ERR_DEPTH,	      /* nesting too deep */
	EXPR_ERR_DOMAIN,      /* a rule or formula used outside its domain (bad input) */
	EXPR_ERR_MEMORY,      /* the memory budget of the context is spent */
} expr_error_kind;

/* Sign knowledge, as bit flags. */
enum { EXPR_SIGN_POS = 1, EXPR_SIGN_NEG = 2, EXPR_SIGN_ZERO = 4 };
#define EXPR_SIGN_UNKNOWN (EXPR_SIGN_POS | EXPR_SIGN_NEG | EXPR_SIGN_ZERO)
#define EXPR_SIGN_NONNEG (EXPR_SIGN_POS | EXPR_SIGN_ZERO)
#define EXPR_SIGN_NONPOS (EXPR_SIGN_NEG | EXPR_SIGN_ZERO)

/* Limits of one context; exceeding one is an error (exit status 3 at the top). */
typedef struct expr_limits {
	size_t max_nodes;	     /* live nodes in the context */
	size_t max_terms;	     /* terms produced by one expansion */
	unsigned long max_bits;	     /* bits of a number produced by a power */
	long max_exponent;	     /* largest integer exponent expanded or kept */
	unsigned max_height;	     /* deepest tree (the recursive walks use the stack) */
	size_t max_bytes;	     /* memory of nodes, intern table and memo; 0: none */
	volatile sig_atomic_t *interrupt; /* polled in long loops; may be NULL */
} expr_limits;

expr_ctx *expr_ctx_new(void);
void expr_ctx_free(expr_ctx *ctx);
expr_limits *expr_ctx_limits(expr_ctx *ctx);
size_t expr_node_count(const expr_ctx *ctx);
size_t expr_ctx_bytes(const expr_ctx *ctx); /* the memory max_bytes bounds */

expr_error_kind expr_error(const expr_ctx *ctx);
const char *expr_error_message(const expr_ctx *ctx);
void expr_clear_error(expr_ctx *ctx);
/* Clear a pending error that the caller can recover from by doing less (a
 * size or number limit, a division or domain error met while trying); an
 * interrupt (Ctrl-C or the time limit) stays pending, so that the statement
 * stops and says so.  True when no error is pending afterwards. */
bool expr_clear_recoverable(expr_ctx *ctx);
const expr *expr_fail(expr_ctx *ctx, expr_error_kind kind, const char *message); /* returns NULL */
/* An error whose message names two nodes: a template with two %s, filled by
 * whoever prints it (the library does not print); returns NULL. */
const expr *expr_fail_at(expr_ctx *ctx, expr_error_kind kind, const char *template, const expr *a,
			 const expr *b);
/* The nodes of an expr_fail_at error (false for a plain message). */
bool expr_error_nodes(const expr_ctx *ctx, const expr **a, const expr **b);
bool expr_poll_interrupt(expr_ctx *ctx); /* true (and error set) when interrupted */
/* Work that must finish once begun (laying out a result already computed, or
 * the nodes an error message names): expr_hold lifts the limits on size
 * (nodes, bytes, height, terms) and the interrupt, and sets aside a pending
 * error, so that the constructors it calls cannot fail half way;
 * expr_release puts back the limits and the error that was pending (an error
 * raised in between is dropped).  The caller bounds the work itself (the
 * output budget bounds a printed result). */
typedef struct expr_held {
	expr_limits limits;
	expr_error_kind error;
	char message[512];
	const expr *nodes[2];
} expr_held;
void expr_hold(expr_ctx *ctx, expr_held *held);
void expr_release(expr_ctx *ctx, const expr_held *held);

/* --- constructors (all return canonical nodes, or NULL on error) --- */
const expr *expr_int(expr_ctx *ctx, long value);
const expr *expr_rat(expr_ctx *ctx, long num, long den);
const expr *expr_num(expr_ctx *ctx, mpq_srcptr value);
const expr *expr_decimal(expr_ctx *ctx, const char *literal); /* NULL if malformed */
const expr *expr_sym(expr_ctx *ctx, const char *name);		/* interned by name */
const expr *expr_add(expr_ctx *ctx, const expr *a, const expr *b);
const expr *expr_sub(expr_ctx *ctx, const expr *a, const expr *b);
const expr *expr_mul(expr_ctx *ctx, const expr *a, const expr *b);
const expr *expr_div(expr_ctx *ctx, const expr *a, const expr *b);
/* sum / m for a monomial m that divides every term: the same as expr_div, faster. */
const expr *expr_div_terms(expr_ctx *ctx, const expr *sum, const expr *m);
const expr *expr_neg(expr_ctx *ctx, const expr *a);
const expr *expr_pow(expr_ctx *ctx, const expr *base, const expr *exponent);
const expr *expr_pow_rat(expr_ctx *ctx, const expr *base, long num, long den);
const expr *expr_scale(expr_ctx *ctx, const expr *a, mpq_srcptr factor);
const expr *expr_add_n(expr_ctx *ctx, size_t n, const expr *const *terms);
const expr *expr_mul_n(expr_ctx *ctx, size_t n, const expr *const *factors);
const expr *expr_fun(expr_ctx *ctx, expr_builtin fn, const expr *arg);
/* A generic function f (declared with expr_func_declare) with partial-derivative
 * counts (one per argument; NULL for none) at the given arguments. */
const expr *expr_fapp(expr_ctx *ctx, const expr *func, const unsigned char *counts,
		      const expr *const *args);

/* --- symbols --- */
/* Declare sym as a generic function of nargs arguments with the given argument
 * names (used for printing f_x); nargs 0 makes it a plain symbol again.
 * Returns false if nargs exceeds EXPR_MAX_FUNC_ARGS. */
#define EXPR_MAX_FUNC_ARGS 64
bool expr_func_declare(expr_ctx *ctx, const expr *sym, size_t nargs, const char *const *arg_names);
size_t expr_func_arity(const expr *sym); /* 0 when sym is not a function */
const char *expr_func_arg_name(const expr *sym, size_t index);
void expr_sym_set_sign(expr_ctx *ctx, const expr *sym, int sign_flags); /* assumption */
int expr_sym_sign(const expr *sym);
void expr_sym_set_rank(expr_ctx *ctx, const expr *sym, int rank); /* display order class */
int expr_sym_rank(const expr *sym);
/* Undo of the attributes above (a statement that fails puts them back):
 * expr_sym_mark() opens a mark, and every change after it is recorded until
 * the mark is ended by expr_sym_undo() (put back every change made since) or
 * expr_sym_keep() (keep them).  Marks nest; end the innermost first. */
size_t expr_sym_mark(expr_ctx *ctx);
void expr_sym_undo(expr_ctx *ctx, size_t mark);
void expr_sym_keep(expr_ctx *ctx, size_t mark);

/* --- inspection --- */
expr_kind expr_kind_of(const expr *e);
unsigned expr_hash(const expr *e);
bool expr_is_num(const expr *e);
bool expr_is_zero(const expr *e);
bool expr_is_one(const expr *e);
bool expr_is_integer(const expr *e);
const __mpq_struct *expr_num_value(const expr *e); /* NUM only */
const char *expr_sym_name(const expr *e);	   /* SYM only */
size_t expr_nops(const expr *e);		   /* ADD terms, MUL factors, FUN 1, FAPP args */
const expr *expr_op(const expr *e, size_t i);	   /* ADD term i; FUN/FAPP argument i */
const expr *expr_mul_base(const expr *e, size_t i); /* MUL factor i = base^exponent */
const expr *expr_mul_exponent(const expr *e, size_t i);
const __mpq_struct *expr_mul_coef(const expr *e);  /* MUL coefficient */
expr_builtin expr_fun_id(const expr *e);	   /* FUN only */
const expr *expr_fapp_func(const expr *e);	   /* FAPP: the function symbol */
const unsigned char *expr_fapp_counts(const expr *e); /* FAPP: derivative counts */
const char *expr_builtin_name(expr_builtin fn);
const char *expr_builtin_c_name(expr_builtin fn);
const char *expr_builtin_latex(expr_builtin fn);
bool expr_builtin_lookup(const char *name, expr_builtin *fn);
/* The names the language reads as built-in functions: the table's, then
 * the spellings that are no node of their own (sqrt: u^(1/2)); index i from
 * 0, NULL past the last.  None of them may be declared. */
const char *expr_function_spelling(size_t i);
bool expr_is_function_spelling(const char *name);

/* Split a term into rational coefficient and coefficient-free rest (NUM: rest 1). */
const expr *expr_split_coef(expr_ctx *ctx, const expr *term, mpq_t coef);

/* Total order of nodes (structural, independent of creation history). */
int expr_compare(const expr *a, const expr *b);

/* Does e contain the symbol sym? (memoized per node) */
bool expr_has(expr_ctx *ctx, const expr *e, const expr *sym);
/* Size of e as a tree (shared subtrees counted once). */
size_t expr_size(const expr *e);

/* Rebuild e through the constructors (so current assumptions apply), with each
 * symbol replaced by leaf(symbol, data); leaf NULL keeps the symbols. */
typedef const expr *(*expr_leaf_fn)(const expr *sym, void *data);
const expr *expr_rebuild(expr_ctx *ctx, const expr *e, expr_leaf_fn leaf, void *data);

/* Rebuild e with each generic function application replaced by
 * fapp(ctx, node, rebuilt arguments, data), or kept when that returns NULL
 * (and no error is set in the context). */
typedef const expr *(*expr_fapp_fn)(expr_ctx *ctx, const expr *fapp, const expr *const *args, void *data);
const expr *expr_rebuild_fapp(expr_ctx *ctx, const expr *e, expr_fapp_fn fapp, void *data);

/* Substitute: replace each symbol olds[i] by news[i] (simultaneously). */
const expr *expr_subst(expr_ctx *ctx, const expr *e, size_t n, const expr *const *olds,
		       const expr *const *news);

/* Collect the distinct symbols of e (functions' symbols excluded) into a list. */
typedef struct expr_vec {
	const expr **items;
	size_t n, cap;
} expr_vec;
void expr_vec_push(expr_vec *vec, const expr *e);
void expr_vec_free(expr_vec *vec);
void expr_free_symbols(expr_ctx *ctx, const expr *e, expr_vec *out);

/* Sign knowledge of e from assumptions (EXPR_SIGN_* flags that may hold). */
int expr_sign(expr_ctx *ctx, const expr *e);

/* A memo of (tag, a, b) -> result owned by the context (for diff and friends). */
const expr *expr_memo_get(expr_ctx *ctx, int tag, const void *a, const void *b);
void expr_memo_put(expr_ctx *ctx, int tag, const void *a, const void *b, const expr *result);
int expr_memo_new_tag(expr_ctx *ctx);
/* Forget every memo entry (results derived under assumptions since weakened). */
void expr_memo_clear(expr_ctx *ctx);

#endif
