/* ball.c - expressions evaluated in ball arithmetic (Arb), and the decision
 * whether the two sides of a claim differ at a point.
 *
 * A program is the list of distinct nodes of its roots in dependency order
 * (operands before the node), so each node of the DAG is evaluated once per
 * run, whatever the number of paths to it.  Every operation is Arb's, which
 * returns a ball containing the exact image of the input ball; the domain
 * checks below are decided on the whole ball, so a value is UNDEFINED only
 * when every point of the ball is outside the domain.
 *
 * The zero test (ball_claim_decide).  At each precision the sides L and R and
 * the canonical difference D are evaluated; L - R and D are two enclosures of
 * the same number.  If either excludes 0, the point is a counterexample.
 * Otherwise the smaller radius r is compared with a scale s:
 *   s = max(|L|, |R|)       when one side is certainly nonzero: the claim
 *                           compares two nonzero numbers, and r <= 2^-b s says
 *                           they agree to b bits relative to their size, where
 *                           b = max(54, prec / 4) (zero_bits): 256 bits at the
 *                           1024 bits every point of a claim starts from;
 *   s = max |t| over the top-level terms t of L, R and D otherwise (a claim
 *                           "X = 0": there is no other scale than the terms
 *                           whose cancellation X is).
 * The first scale cannot be fooled by cancellation: cosh(1000)^2 - sinh(1000)^2
 * is a ball about 1 whose radius is about 2^2884 2^-prec, which falls below
 * 2^-b only at 4096 bits, and a difference hidden under that radius is seen
 * there.  The second is the classical relative test and shares its weakness:
 * a difference below 2^-b of the terms passes.
 */
#include <config.h>

#include "ball.h"

#include <arb_hypgeom.h>
#include <flint/fmpq.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "expr-internal.h"
#include "xalloc.h"

/* ------------------------------------------------------------------ pointer -> index */

typedef struct index_map {
	const void **keys;
	size_t *values;
	size_t count, capacity;
} index_map;

static size_t slot_of(const index_map *map, const void *key)
{
	size_t mask = map->capacity - 1;
	size_t h = ((size_t)(uintptr_t)key >> 4) * 0x9e3779b97f4a7c15ULL;
	size_t i = (h >> 7) & mask;
	while (map->keys[i] && map->keys[i] != key)
		i = (i + 1) & mask;
	return i;
}

/* Is key in the map?  Its value in *value. */
static bool map_get(const index_map *map, const void *key, size_t *value)
{
	if (!map->capacity)
		return false;
	size_t i = slot_of(map, key);
	if (!map->keys[i])
		return false;
	*value = map->values[i];
	return true;
}

static void map_put(index_map *map, const void *key, size_t value)
{
	if (2 * (map->count + 1) > map->capacity) {
		index_map grown = {.capacity = map->capacity ? 2 * map->capacity : 64};
		grown.keys = xcalloc(grown.capacity, sizeof *grown.keys);
		grown.values = xcalloc(grown.capacity, sizeof *grown.values);
		for (size_t i = 0; i < map->capacity; i++)
			if (map->keys[i]) {
				size_t j = slot_of(&grown, map->keys[i]);
				grown.keys[j] = map->keys[i];
				grown.values[j] = map->values[i];
			}
		grown.count = map->count;
		free(map->keys);
		free(map->values);
		*map = grown;
	}
	size_t i = slot_of(map, key);
	if (!map->keys[i])
		map->count++;
	map->keys[i] = key;
	map->values[i] = value;
}

static void map_free(index_map *map)
{
	free(map->keys);
	free(map->values);
	*map = (index_map){0};
}

/* ------------------------------------------------------------------ programs */

typedef enum op { OP_NUM, OP_ATOM, OP_ADD, OP_MUL, OP_FUN, OP_ASINH, OP_GENERIC } op;

/* ------------------------------------------------------------------ generic functions
 *
 * A generic function application h(a1, ..., an) with derivative counts c that
 * is not an atom stands for the value at (a1, ..., an) of one fixed smooth
 * function H, chosen by a hash of the function's name, n, c and the seed:
 *
 *   H(u) = c0 + exp(m cos(f + sum_k e_k s_k)) * sum_j A_j sin(b_j + sum_k a_jk s_k),
 *   s_k = asinh(u_k),  j = 1..GENERIC_TERMS,
 *
 * with every coefficient an integer / 2^GENERIC_SCALE: frequencies |a_jk| in
 * [1/2, 2], |e_k| and |A_j| in [1/4, 1], m in [1/4, 1/2], phases in [0, 4],
 * |c0| <= 1.  H is analytic and defined for every real u, and |H| <= 1 + 4 e^(1/2);
 * asinh keeps it of moderate variation over many scales of u.  Being a
 * function of the values of the arguments, H gives equal values at equal
 * arguments (h(sin(x)^2 + cos(x)^2) = h(1)), whatever their written form, and
 * at every precision, since every operation is Arb's.  A claim is about every
 * smooth h, and its partials at a point are free of each other, so each
 * derivative count has a function of its own; a claim false for some smooth h
 * is false for almost every choice of such random coefficients, and true
 * claims hold for all of them.  H is bounded and the same at every point of a
 * claim; the caller may give each function two atoms, an offset and a scale
 * drawn with the point (ball_generic_affine): the application is then
 * offset + scale*H, of any size and sign, so that a claim such as
 * abs(h(1) - 100) = 100 - h(1), false for some h, fails. */
#define GENERIC_TERMS 4
#define GENERIC_SCALE 6

typedef struct generic_fn {
	size_t nargs;
	slong offset, depth, mod_phase; /* c0, m, f */
	slong amp[GENERIC_TERMS];       /* A_j */
	slong phase[GENERIC_TERMS];     /* b_j */
	slong *mod_freq;                /* e_k: nargs */
	slong *freq;                    /* a_jk: GENERIC_TERMS rows of nargs */
} generic_fn;

/* splitmix64 (Steele, Lea, Flood, "Fast splittable pseudorandom number
 * generators", OOPSLA 2014, from memory): the coefficients' stream. */
static uint64_t splitmix_next(uint64_t *state)
{
	uint64_t z = (*state += 0x9e3779b97f4a7c15ULL);
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
	z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
	return z ^ (z >> 31);
}

/* A uniform integer in [lo, hi] (the bias of the modulus is below 2^-56). */
static slong draw_in(uint64_t *state, slong lo, slong hi)
{
	return lo + (slong)(splitmix_next(state) % (uint64_t)(hi - lo + 1));
}

/* A uniform integer in [lo, hi] with a random sign (0 < lo <= hi). */
static slong draw_signed(uint64_t *state, slong lo, slong hi)
{
	slong v = draw_in(state, lo, hi);
	return splitmix_next(state) & 1 ? -v : v;
}

static void generic_init(generic_fn *g, const char *name, size_t nargs, const unsigned char *counts,
                         uint64_t seed)
{
	/* FNV-1a over the name, the counts and the number of arguments, then mixed with the seed */
	uint64_t h = 0xcbf29ce484222325ULL;
	for (const char *p = name; *p; p++)
		h = (h ^ (unsigned char)*p) * 0x100000001b3ULL;
	h = (h ^ 0xff) * 0x100000001b3ULL; /* the end of the name */
	for (size_t k = 0; k < nargs; k++)
		h = (h ^ (counts ? counts[k] : 0)) * 0x100000001b3ULL;
	h = (h ^ nargs) * 0x100000001b3ULL;
	uint64_t state = h ^ splitmix_next(&(uint64_t){seed});
	const slong one = (slong)1 << GENERIC_SCALE;
	g->nargs = nargs;
	g->mod_freq = xcalloc(nargs ? nargs : 1, sizeof *g->mod_freq);
	g->freq = xcalloc(GENERIC_TERMS * (nargs ? nargs : 1), sizeof *g->freq);
	g->offset = draw_in(&state, -one, one);
	g->depth = draw_in(&state, one / 4, one / 2);
	g->mod_phase = draw_in(&state, 0, 4 * one);
	for (size_t k = 0; k < nargs; k++)
		g->mod_freq[k] = draw_signed(&state, one / 4, one);
	for (size_t j = 0; j < GENERIC_TERMS; j++) {
		g->amp[j] = draw_signed(&state, one / 4, one);
		g->phase[j] = draw_in(&state, 0, 4 * one);
		for (size_t k = 0; k < nargs; k++)
			g->freq[j * nargs + k] = draw_signed(&state, one / 2, 2 * one);
	}
}

static void generic_clear(generic_fn *g)
{
	free(g->mod_freq);
	free(g->freq);
}

/* out := (phase + sum_k freq[k] s[k]) / 2^GENERIC_SCALE; s[k] are the asinh of the arguments. */
static void generic_affine(arb_t out, slong phase, const slong *freq, size_t nargs,
                           const arb_struct *const *s, slong prec)
{
	arb_set_si(out, phase);
	for (size_t k = 0; k < nargs; k++)
		arb_addmul_si(out, s[k], freq[k], prec);
	arb_mul_2exp_si(out, out, -GENERIC_SCALE);
}

/* out := H(u) given s[k] = asinh(u_k); out distinct from the s[k]. */
static void generic_apply(const generic_fn *g, arb_t out, const arb_struct *const *s, slong prec)
{
	arb_t angle, wave, sum;
	arb_init(angle);
	arb_init(wave);
	arb_init(sum);
	for (size_t j = 0; j < GENERIC_TERMS; j++) {
		generic_affine(angle, g->phase[j], g->freq + j * g->nargs, g->nargs, s, prec);
		arb_sin(wave, angle, prec);
		arb_addmul_si(sum, wave, g->amp[j], prec);
	}
	arb_mul_2exp_si(sum, sum, -GENERIC_SCALE);
	generic_affine(angle, g->mod_phase, g->mod_freq, g->nargs, s, prec);
	arb_cos(wave, angle, prec);
	arb_mul_si(wave, wave, g->depth, prec);
	arb_mul_2exp_si(wave, wave, -GENERIC_SCALE);
	arb_exp(wave, wave, prec);
	arb_mul(out, sum, wave, prec);
	arb_set_si(angle, g->offset);
	arb_mul_2exp_si(angle, angle, -GENERIC_SCALE);
	arb_add(out, out, angle, prec);
	arb_clear(angle);
	arb_clear(wave);
	arb_clear(sum);
}

void ball_generic_value(arb_t out, const char *name, size_t nargs, const unsigned char *counts, uint64_t seed,
                        arb_srcptr args, slong prec)
{
	generic_fn g;
	generic_init(&g, name, nargs, counts, seed);
	arb_ptr s = _arb_vec_init((slong)(nargs ? nargs : 1));
	const arb_struct **views = xcalloc(nargs ? nargs : 1, sizeof *views);
	for (size_t k = 0; k < nargs; k++) {
		arb_asinh(s + k, args + k, prec);
		views[k] = s + k;
	}
	generic_apply(&g, out, views, prec);
	free(views);
	_arb_vec_clear(s, (slong)(nargs ? nargs : 1));
	generic_clear(&g);
}

/* One factor base^exponent of a product. */
typedef struct factor {
	size_t base;     /* instruction of the base */
	bool symbolic;   /* the exponent is not a number: a^b = exp(b log a) */
	size_t exponent; /* symbolic: instruction of the exponent */
	fmpz_t p, q;     /* otherwise the exponent p/q in lowest terms, q > 0 */
} factor;

typedef struct instr {
	op code;
	fmpq_t number;       /* OP_NUM: the value; OP_MUL: the coefficient */
	size_t atom;         /* OP_ATOM: index into the values */
	size_t *terms;       /* OP_ADD */
	factor *factors;     /* OP_MUL */
	size_t n;            /* terms or factors */
	expr_builtin fn;     /* OP_FUN */
	size_t arg;          /* OP_FUN, OP_ASINH */
	generic_fn *generic; /* OP_GENERIC: the function; terms: the OP_ASINH of its arguments */
	bool affine;         /* OP_GENERIC: offset + scale*H, both atoms: */
	size_t offset, scale;
} instr;

struct ball_prog {
	expr_ctx *ctx;
	instr *code;
	size_t ncode, capcode;
	size_t *roots;
	size_t nroots;
	arb_ptr regs;             /* one value per instruction */
	ball_status *status;      /* and its status */
	arb_t power, scratch;     /* temporaries of one instruction */
	const arb_struct **views; /* OP_GENERIC: its arguments' asinh */
	size_t nviews;
};

typedef struct compiler {
	ball_prog *prog;
	index_map atoms;             /* atom node -> index of its value */
	index_map nodes;             /* node -> instruction */
	index_map asinhs;            /* argument node -> the instruction of its asinh */
	const ball_generic *generic; /* NULL: generic applications must be atoms */
	const expr *bad;
} compiler;

static size_t emit(ball_prog *prog, instr in)
{
	if (prog->ncode == prog->capcode) {
		prog->capcode = prog->capcode ? 2 * prog->capcode : 64;
		prog->code = xreallocarray(prog->code, prog->capcode, sizeof *prog->code);
	}
	prog->code[prog->ncode] = in;
	return prog->ncode++;
}

static void set_fmpq(fmpq_t target, mpq_srcptr value)
{
	fmpq_init(target);
	fmpq_set_mpq(target, value);
}

static bool compile_node(compiler *c, const expr *e, size_t *index);

static bool compile_factor(compiler *c, const expr *base, const expr *exponent, factor *out)
{
	fmpz_init(out->p);
	fmpz_init(out->q);
	if (!compile_node(c, base, &out->base))
		return false;
	out->symbolic = exponent->kind != EXPR_NUM;
	if (out->symbolic)
		return compile_node(c, exponent, &out->exponent);
	fmpz_set_mpz(out->p, mpq_numref(exponent->u.num));
	fmpz_set_mpz(out->q, mpq_denref(exponent->u.num));
	return true;
}

static bool compile_operands(compiler *c, const expr *e, instr *in)
{
	switch (e->kind) {
	case EXPR_ADD:
		in->terms = xcalloc(e->nops, sizeof *in->terms);
		for (; in->n < e->nops; in->n++)
			if (!compile_node(c, e->u.add.terms[in->n], &in->terms[in->n]))
				return false;
		return true;
	case EXPR_MUL:
		set_fmpq(in->number, e->u.mul.coef);
		in->factors = xcalloc(e->nops, sizeof *in->factors);
		for (; in->n < e->nops; in->n++)
			if (!compile_factor(c, e->u.mul.bases[in->n], e->u.mul.exps[in->n],
			                    &in->factors[in->n])) {
				in->n++; /* its integers were initialised */
				return false;
			}
		return true;
	case EXPR_FUN:
		in->fn = e->u.fun.fn;
		return compile_node(c, e->u.fun.arg, &in->arg);
	default:
		return true;
	}
}

/* A generic application that is not an atom: asinh of each argument (shared by
 * the applications at the same argument), then H. */
static bool compile_generic(compiler *c, const expr *e, instr *in)
{
	in->code = OP_GENERIC;
	in->terms = xcalloc(e->nops ? e->nops : 1, sizeof *in->terms);
	for (size_t k = 0; k < e->nops; k++) {
		const expr *arg = e->u.fapp.args[k];
		if (map_get(&c->asinhs, arg, &in->terms[k]))
			continue;
		instr asinh = {.code = OP_ASINH};
		if (!compile_node(c, arg, &asinh.arg))
			return false;
		in->terms[k] = emit(c->prog, asinh);
		map_put(&c->asinhs, arg, in->terms[k]);
	}
	in->n = e->nops;
	const ball_generic *generic = c->generic;
	for (size_t i = 0; i < generic->naffine && !in->affine; i++) {
		const ball_generic_affine *a = &generic->affine[i];
		if (a->func != e->u.fapp.func || memcmp(a->counts, e->u.fapp.counts, e->nops) != 0)
			continue;
		if (!compile_node(c, a->offset, &in->offset) || !compile_node(c, a->scale, &in->scale))
			return false;
		in->affine = true;
	}
	in->generic = xcalloc(1, sizeof *in->generic);
	generic_init(in->generic, e->u.fapp.func->u.sym.name, e->nops, e->u.fapp.counts, c->generic->seed);
	if (e->nops > c->prog->nviews) {
		c->prog->nviews = e->nops;
		c->prog->views = xreallocarray(c->prog->views, e->nops, sizeof *c->prog->views);
	}
	return true;
}

static void instr_clear(instr *in)
{
	if (in->code == OP_NUM || in->code == OP_MUL)
		fmpq_clear(in->number);
	for (size_t i = 0; in->factors && i < in->n; i++) {
		fmpz_clear(in->factors[i].p);
		fmpz_clear(in->factors[i].q);
	}
	free(in->factors);
	free(in->terms);
	if (in->generic)
		generic_clear(in->generic);
	free(in->generic);
}

static bool compile_node(compiler *c, const expr *e, size_t *index)
{
	if (map_get(&c->nodes, e, index))
		return true;
	instr in = {0};
	if (map_get(&c->atoms, e, &in.atom)) {
		in.code = OP_ATOM;
	} else if (e->kind == EXPR_FAPP && c->generic) {
		if (!compile_generic(c, e, &in)) {
			instr_clear(&in);
			return false;
		}
	} else if (e->kind == EXPR_SYM || e->kind == EXPR_FAPP) {
		c->bad = e;
		return false;
	} else if (e->kind == EXPR_NUM) {
		in.code = OP_NUM;
		set_fmpq(in.number, e->u.num);
	} else {
		in.code = e->kind == EXPR_ADD ? OP_ADD : e->kind == EXPR_MUL ? OP_MUL : OP_FUN;
		if (!compile_operands(c, e, &in)) {
			instr_clear(&in);
			return false;
		}
	}
	*index = emit(c->prog, in);
	map_put(&c->nodes, e, *index);
	return true;
}

ball_prog *ball_compile(expr_ctx *ctx, size_t nroots, const expr *const *roots, size_t natoms,
                        const expr *const *atoms, const expr **bad)
{
	return ball_compile_generic(ctx, nroots, roots, natoms, atoms, NULL, bad);
}

ball_prog *ball_compile_generic(expr_ctx *ctx, size_t nroots, const expr *const *roots, size_t natoms,
                                const expr *const *atoms, const ball_generic *generic, const expr **bad)
{
	ball_prog *prog = xcalloc(1, sizeof *prog);
	prog->ctx = ctx;
	prog->nroots = nroots;
	prog->roots = xcalloc(nroots ? nroots : 1, sizeof *prog->roots);
	compiler c = {.prog = prog, .generic = generic};
	for (size_t i = natoms; i-- > 0;)
		map_put(&c.atoms, atoms[i], i); /* the first of equal atoms wins */
	bool ok = true;
	for (size_t r = 0; r < nroots && ok; r++)
		ok = roots[r] && compile_node(&c, roots[r], &prog->roots[r]);
	map_free(&c.atoms);
	map_free(&c.nodes);
	map_free(&c.asinhs);
	arb_init(prog->power);
	arb_init(prog->scratch);
	if (!ok) {
		if (bad)
			*bad = c.bad;
		ball_free(prog);
		return NULL;
	}
	prog->regs = _arb_vec_init((slong)(prog->ncode ? prog->ncode : 1));
	prog->status = xcalloc(prog->ncode ? prog->ncode : 1, sizeof *prog->status);
	return prog;
}

void ball_free(ball_prog *prog)
{
	if (!prog)
		return;
	for (size_t i = 0; i < prog->ncode; i++)
		instr_clear(&prog->code[i]);
	if (prog->regs)
		_arb_vec_clear(prog->regs, (slong)(prog->ncode ? prog->ncode : 1));
	arb_clear(prog->power);
	arb_clear(prog->scratch);
	free(prog->status);
	free(prog->code);
	free(prog->roots);
	free(prog->views);
	free(prog);
}

/* ------------------------------------------------------------------ operations */

/* The status of a value computed from operands of statuses a and b: undefined
 * wins (a function of an undefined value is undefined), then unknown. */
static ball_status worse(ball_status a, ball_status b)
{
	if (a == BALL_UNDEFINED || b == BALL_UNDEFINED)
		return BALL_UNDEFINED;
	if (a == BALL_UNKNOWN || b == BALL_UNKNOWN)
		return BALL_UNKNOWN;
	return BALL_OK;
}

/* out := [0, m] for a bound m >= 0 (odd = false), or [-m, m] (odd = true). */
static void set_symmetric(arb_t out, const mag_t m, bool odd, slong prec)
{
	mag_t zero;
	mag_init(zero);
	if (odd)
		arb_set_interval_neg_pos_mag(out, m, m, prec);
	else
		arb_set_interval_mag(out, zero, m, prec);
	mag_clear(zero);
}

/* out := x^(p/q) for a rational exponent, q > 1, x a ball that contains 0 but
 * is not 0.  Defined near 0 only for p > 0 (and, for even q, only for x >= 0),
 * where |x^(p/q)| <= |x|^(p/q) bounds the value. */
static ball_status root_near_zero(arb_t out, const arb_t x, const fmpz_t p, const fmpz_t q, slong prec)
{
	bool odd_root = fmpz_is_odd(q);
	if (fmpz_sgn(p) < 0 || (!odd_root && !arb_is_nonnegative(x)) || !fmpz_abs_fits_ui(q))
		return BALL_UNKNOWN;
	mag_t m;
	mag_init(m);
	arb_get_mag(m, x);
	mag_root(m, m, fmpz_get_ui(q));
	mag_pow_fmpz(m, m, p);
	set_symmetric(out, m, odd_root && fmpz_is_odd(p), prec);
	mag_clear(m);
	return BALL_OK;
}

/* out := x^(p/q), with the conventions of ball.h. */
static ball_status rational_power(arb_t out, const arb_t x, const fmpz_t p, const fmpz_t q, slong prec)
{
	if (fmpz_is_one(q)) {
		if (fmpz_sgn(p) < 0 && arb_contains_zero(x))
			return arb_is_zero(x) ? BALL_UNDEFINED : BALL_UNKNOWN; /* x^-n = 1/x^n */
		arb_pow_fmpz(out, x, p, prec);
		return BALL_OK;
	}
	if (arb_is_zero(x)) { /* 0^(p/q) = 0 for p > 0; undefined for p < 0 */
		arb_zero(out);
		return fmpz_sgn(p) > 0 ? BALL_OK : BALL_UNDEFINED;
	}
	if (arb_is_positive(x)) {
		fmpq_t e;
		fmpq_init(e);
		fmpz_set(fmpq_numref(e), p);
		fmpz_set(fmpq_denref(e), q);
		arb_pow_fmpq(out, x, e, prec);
		fmpq_clear(e);
		return BALL_OK;
	}
	bool odd_root = fmpz_is_odd(q);
	if (arb_is_negative(x) && !odd_root)
		return BALL_UNDEFINED; /* even root of a negative number */
	if (arb_is_nonpositive(x) && !odd_root && fmpz_sgn(p) < 0)
		return BALL_UNDEFINED; /* x <= 0: negative or 0 to a negative power */
	if (!arb_is_negative(x))
		return root_near_zero(out, x, p, q, prec);
	if (!fmpz_abs_fits_ui(q))
		return BALL_UNKNOWN;
	/* odd q, x < 0: the real root is -(-x)^(1/q) */
	arb_neg(out, x);
	arb_root_ui(out, out, fmpz_get_ui(q), prec);
	arb_neg(out, out);
	arb_pow_fmpz(out, out, p, prec);
	return BALL_OK;
}

/* out := a^b = exp(b log a) for a > 0. */
static ball_status symbolic_power(arb_t out, const arb_t a, const arb_t b, slong prec)
{
	if (arb_is_nonpositive(a))
		return BALL_UNDEFINED;
	if (!arb_is_positive(a))
		return BALL_UNKNOWN;
	arb_log(out, a, prec);
	arb_mul(out, out, b, prec);
	arb_exp(out, out, prec);
	return BALL_OK;
}

/* out := fn(x); scratch is a temporary distinct from out and x. */
static ball_status apply_builtin(expr_builtin fn, arb_t out, const arb_t x, arb_t scratch, slong prec)
{
	switch (fn) {
	case EXPR_F_EXP:
		arb_exp(out, x, prec);
		break;
	case EXPR_F_LOG:
		if (arb_is_nonpositive(x))
			return BALL_UNDEFINED;
		if (!arb_is_positive(x))
			return BALL_UNKNOWN;
		arb_log(out, x, prec);
		break;
	case EXPR_F_SIN:
		arb_sin(out, x, prec);
		break;
	case EXPR_F_COS:
		arb_cos(out, x, prec);
		break;
	case EXPR_F_TAN:
		/* tan x = sin x / cos x, undefined where cos x = 0; cos of a ball is never
		 * exactly 0 (pi/2 is irrational, and exact balls are dyadic) */
		arb_cos(scratch, x, prec);
		if (arb_contains_zero(scratch))
			return BALL_UNKNOWN;
		arb_tan(out, x, prec);
		break;
	case EXPR_F_SINH:
		arb_sinh(out, x, prec);
		break;
	case EXPR_F_COSH:
		arb_cosh(out, x, prec);
		break;
	case EXPR_F_TANH:
		arb_tanh(out, x, prec);
		break;
	case EXPR_F_ERF:
		arb_hypgeom_erf(out, x, prec);
		break;
	case EXPR_F_NCDF: /* Phi(x) = erfc(-x/sqrt 2)/2 */
		arb_sqrt_ui(scratch, 2, prec);
		arb_div(scratch, x, scratch, prec);
		arb_neg(scratch, scratch);
		arb_hypgeom_erfc(out, scratch, prec);
		arb_mul_2exp_si(out, out, -1);
		break;
	case EXPR_F_NPDF: /* phi(x) = exp(-x^2/2) / sqrt(2 pi) */
		arb_sqr(out, x, prec);
		arb_mul_2exp_si(out, out, -1);
		arb_neg(out, out);
		arb_exp(out, out, prec);
		arb_const_pi(scratch, prec);
		arb_mul_2exp_si(scratch, scratch, 1);
		arb_rsqrt(scratch, scratch, prec);
		arb_mul(out, out, scratch, prec);
		break;
	case EXPR_F_ABS:
		if (arb_contains_zero(x)) { /* |x| in [0, max |x|] */
			mag_t m;
			mag_init(m);
			arb_get_mag(m, x);
			set_symmetric(out, m, false, prec);
			mag_clear(m);
		} else
			arb_abs(out, x);
		break;
	case EXPR_F_COUNT:
		return BALL_UNKNOWN;
	}
	return BALL_OK;
}

/* out := c * prod base_i^exponent_i. */
static ball_status run_product(ball_prog *prog, const instr *in, arb_t out, slong prec)
{
	ball_status status = BALL_OK;
	arb_set_fmpq(out, in->number, prec);
	for (size_t i = 0; i < in->n; i++) {
		const factor *f = &in->factors[i];
		ball_status s = prog->status[f->base];
		if (f->symbolic)
			s = worse(s, prog->status[f->exponent]);
		if (s == BALL_OK) {
			const arb_struct *base = prog->regs + f->base;
			if (f->symbolic)
				s = symbolic_power(prog->power, base, prog->regs + f->exponent, prec);
			else if (fmpz_is_one(f->p) && fmpz_is_one(f->q))
				arb_set(prog->power, base);
			else
				s = rational_power(prog->power, base, f->p, f->q, prec);
		}
		status = worse(status, s);
		if (status == BALL_OK)
			arb_mul(out, out, prog->power, prec);
	}
	return status;
}

static ball_status run_instr(ball_prog *prog, const instr *in, arb_srcptr values, arb_t out, slong prec)
{
	switch (in->code) {
	case OP_NUM:
		arb_set_fmpq(out, in->number, prec);
		return BALL_OK;
	case OP_ATOM:
		arb_set(out, values + in->atom);
		return BALL_OK;
	case OP_ADD: {
		ball_status status = BALL_OK;
		arb_zero(out);
		for (size_t i = 0; i < in->n; i++) {
			status = worse(status, prog->status[in->terms[i]]);
			if (status == BALL_OK)
				arb_add(out, out, prog->regs + in->terms[i], prec);
		}
		return status;
	}
	case OP_MUL:
		return run_product(prog, in, out, prec);
	case OP_FUN:
		if (prog->status[in->arg] != BALL_OK)
			return prog->status[in->arg];
		return apply_builtin(in->fn, out, prog->regs + in->arg, prog->scratch, prec);
	case OP_ASINH:
		if (prog->status[in->arg] != BALL_OK)
			return prog->status[in->arg];
		arb_asinh(out, prog->regs + in->arg, prec);
		return BALL_OK;
	case OP_GENERIC: {
		ball_status status = BALL_OK;
		for (size_t k = 0; k < in->n; k++) {
			status = worse(status, prog->status[in->terms[k]]);
			prog->views[k] = prog->regs + in->terms[k];
		}
		if (in->affine)
			status = worse(status, worse(prog->status[in->offset], prog->status[in->scale]));
		if (status != BALL_OK)
			return status;
		generic_apply(in->generic, out, prog->views, prec);
		if (in->affine) {
			arb_mul(out, out, prog->regs + in->scale, prec);
			arb_add(out, out, prog->regs + in->offset, prec);
		}
		return status;
	}
	}
	return BALL_UNKNOWN;
}

ball_status ball_run(ball_prog *prog, arb_srcptr values, slong prec, arb_ptr out, ball_status *status)
{
	for (size_t i = 0; i < prog->ncode; i++) {
		if (expr_poll_interrupt(prog->ctx))
			return BALL_FAILED;
		arb_ptr value = prog->regs + i;
		ball_status s = run_instr(prog, &prog->code[i], values, value, prec);
		if (s == BALL_OK && !arb_is_finite(value))
			s = BALL_UNKNOWN; /* an infinite radius: more precision may make it finite */
		prog->status[i] = s;
	}
	for (size_t r = 0; r < prog->nroots; r++) {
		status[r] = prog->status[prog->roots[r]];
		arb_set(out + r, prog->regs + prog->roots[r]);
	}
	return BALL_OK;
}

void ball_set_mpq(arb_t x, const mpq_t q, slong prec)
{
	fmpq_t f;
	fmpq_init(f);
	fmpq_set_mpq(f, q);
	arb_set_fmpq(x, f, prec);
	fmpq_clear(f);
}

ball_status ball_eval(expr_ctx *ctx, const expr *e, size_t natoms, const expr *const *atoms,
                      const mpq_t *values, slong prec, arb_t out)
{
	return ball_eval_generic(ctx, e, natoms, atoms, values, NULL, prec, out);
}

ball_status ball_eval_generic(expr_ctx *ctx, const expr *e, size_t natoms, const expr *const *atoms,
                              const mpq_t *values, const ball_generic *generic, slong prec, arb_t out)
{
	ball_prog *prog = ball_compile_generic(ctx, 1, &e, natoms, atoms, generic, NULL);
	if (!prog)
		return BALL_FAILED;
	arb_ptr balls = _arb_vec_init((slong)(natoms ? natoms : 1));
	for (size_t i = 0; i < natoms; i++)
		ball_set_mpq(balls + i, values[i], prec);
	ball_status status = BALL_FAILED;
	if (ball_run(prog, balls, prec, out, &status) == BALL_FAILED)
		status = BALL_FAILED;
	_arb_vec_clear(balls, (slong)(natoms ? natoms : 1));
	ball_free(prog);
	return status;
}

/* ------------------------------------------------------------------ claims */

static const char *const reason_messages[] = {
#define BALL_REASON_TEXT(id, message) message,
        BALL_REASONS(BALL_REASON_TEXT)
#undef BALL_REASON_TEXT
};

const char *ball_reason_message(ball_reason reason)
{
	return reason_messages[reason];
}

void ball_verdict_clear(ball_verdict *verdict)
{
	free(verdict->lhs_text);
	free(verdict->rhs_text);
	free(verdict->difference_text);
	verdict->lhs_text = verdict->rhs_text = verdict->difference_text = NULL;
}

/* Roots of a claim's program: the sides, the difference, then the top-level terms. */
enum { ROOT_LHS, ROOT_RHS, ROOT_DIFFERENCE, ROOT_TERMS };

struct ball_claim {
	ball_prog *prog;
	size_t natoms;
	bool has_difference;
	arb_ptr values, out; /* natoms values, nroots results */
	ball_status *status;
};

/* The top-level terms of e (e itself when it is not a sum). */
static void push_terms(expr_vec *roots, const expr *e)
{
	if (e && e->kind == EXPR_ADD)
		for (size_t i = 0; i < e->nops; i++)
			expr_vec_push(roots, e->u.add.terms[i]);
	else if (e)
		expr_vec_push(roots, e);
}

ball_claim *ball_claim_new(expr_ctx *ctx, const expr *difference, const expr *lhs, const expr *rhs,
                           size_t natoms, const expr *const *atoms, const ball_generic *generic,
                           const expr **bad)
{
	expr_vec roots = {0};
	expr_vec_push(&roots, lhs);
	expr_vec_push(&roots, rhs);
	expr_vec_push(&roots, difference ? difference : lhs); /* a placeholder when there is none */
	push_terms(&roots, lhs);
	push_terms(&roots, rhs);
	push_terms(&roots, difference);
	ball_prog *prog = ball_compile_generic(ctx, roots.n, roots.items, natoms, atoms, generic, bad);
	if (!prog) {
		expr_vec_free(&roots);
		return NULL;
	}
	ball_claim *claim = xcalloc(1, sizeof *claim);
	claim->prog = prog;
	claim->natoms = natoms;
	claim->has_difference = difference != NULL;
	claim->values = _arb_vec_init((slong)(natoms ? natoms : 1));
	claim->out = _arb_vec_init((slong)roots.n);
	claim->status = xcalloc(roots.n, sizeof *claim->status);
	expr_vec_free(&roots);
	return claim;
}

void ball_claim_free(ball_claim *claim)
{
	if (!claim)
		return;
	_arb_vec_clear(claim->values, (slong)(claim->natoms ? claim->natoms : 1));
	_arb_vec_clear(claim->out, (slong)claim->prog->nroots);
	free(claim->status);
	ball_free(claim->prog);
	free(claim);
}

/* A decimal text of x with the given number of significant digits (fewer when
 * the ball does not determine them: arb_get_str prints only correct digits). */
static char *ball_text(const arb_t x, slong digits)
{
	/* no radius: the digits printed are correct (a counterexample reads as numbers) */
	char *text = arb_get_str(x, digits, ARB_STR_NO_RADIUS);
	char *copy = xstrdup(text);
	flint_free(text);
	return copy;
}

/* The exponent e with |x| < 2^e, clamped to +-2^40 (x = 0 gives the lower clamp). */
static slong magnitude_bits(const arb_t x, bool lower)
{
	arf_t bound;
	arf_init(bound);
	if (lower)
		arb_get_abs_lbound_arf(bound, x, 30);
	else
		arb_get_abs_ubound_arf(bound, x, 30);
	slong e = arf_abs_bound_lt_2exp_si(bound);
	arf_clear(bound);
	const slong clamp = (slong)1 << 40;
	return e < -clamp ? -clamp : e > clamp ? clamp : e;
}

/* A counterexample: the two sides and their difference d (which excludes 0),
 * with enough digits that the printed sides differ: about log10 of
 * max(|L|, |R|) / |d|, plus a few, within the precision. */
static void refute(ball_verdict *out, const arb_t lhs, const arb_t rhs, const arb_t d, slong prec)
{
	slong size = magnitude_bits(lhs, false);
	slong rsize = magnitude_bits(rhs, false);
	if (rsize > size)
		size = rsize;
	slong bits = size - magnitude_bits(d, true);
	slong digits = 4 + (slong)((double)bits * 0.30103);
	slong most = 2 + (slong)((double)prec * 0.30103);
	digits = digits < 10 ? 10 : digits > most ? most : digits;
	/* sides that differ only after more than SHOWN digits print to 20 and
	 * the difference with them: 1 - tanh(10^4) is about 10^-8686 */
	enum { SHOWN = 60 };
	out->shortened = digits > SHOWN;
	if (out->shortened)
		digits = 20;
	out->decision = BALL_NONZERO;
	out->lhs_text = ball_text(lhs, digits);
	out->rhs_text = ball_text(rhs, digits);
	out->difference_text = ball_text(d, 17);
	if (strcmp(out->lhs_text, out->rhs_text) == 0)
		out->shortened = true; /* the precision's digits do not tell them apart */
}

/* The scale of a zero (see the top of the file): max(|L|, |R|) when a side is
 * certainly nonzero, else the largest magnitude of a top-level term. */
static void zero_scale(const ball_claim *claim, mag_t scale)
{
	const ball_prog *prog = claim->prog;
	arb_srcptr out = claim->out;
	mag_t m;
	mag_init(m);
	mag_zero(scale);
	bool sides = !arb_contains_zero(out + ROOT_LHS) || !arb_contains_zero(out + ROOT_RHS);
	size_t first = sides ? ROOT_LHS : ROOT_TERMS, last = sides ? ROOT_RHS + 1 : prog->nroots;
	for (size_t r = first; r < last; r++) {
		if (claim->status[r] != BALL_OK)
			continue; /* a term of an undefined difference: the sides decide */
		arb_get_mag(m, out + r);
		mag_max(scale, scale, m);
	}
	mag_clear(m);
}

/* The bits b of the zero bound at prec bits: BALL_ZERO_BITS, or a quarter of
 * the precision when that is more, so that at 1024 bits a zero is a ball
 * within 2^-256 of the scale, not 2^-54 of it: a ball that contains 0 but lost
 * most of its precision to cancellation asks for more precision. */
static slong zero_bits(slong prec)
{
	return prec / 4 > BALL_ZERO_BITS ? prec / 4 : BALL_ZERO_BITS;
}

/* One precision: decided (true, *out filled), or not (false, *reason why). */
static bool decide_at(ball_claim *claim, slong prec, arb_t d, ball_verdict *out, ball_reason *reason)
{
	arb_srcptr side = claim->out;
	ball_status ls = claim->status[ROOT_LHS], rs = claim->status[ROOT_RHS];
	if (ls == BALL_UNDEFINED || rs == BALL_UNDEFINED) {
		*reason = BALL_REASON_UNDEFINED;
		return true; /* certain: more precision cannot help */
	}
	if (ls != BALL_OK || rs != BALL_OK) {
		*reason = BALL_REASON_UNKNOWN;
		return false;
	}
	arb_sub(d, side + ROOT_LHS, side + ROOT_RHS, prec);
	arb_srcptr canonical = side + ROOT_DIFFERENCE;
	bool second = claim->has_difference && claim->status[ROOT_DIFFERENCE] == BALL_OK;
	if (second && !arb_overlaps(d, canonical)) {
		*reason = BALL_REASON_INCONSISTENT; /* two enclosures of one number are disjoint */
		return true;
	}
	if (second && (!arb_contains_zero(canonical) || mag_cmp(arb_radref(canonical), arb_radref(d)) < 0))
		arb_set(d, canonical); /* the tighter enclosure */
	if (!arb_contains_zero(d)) {
		refute(out, side + ROOT_LHS, side + ROOT_RHS, d, prec);
		return true;
	}
	mag_t bound;
	mag_init(bound);
	zero_scale(claim, bound);
	mag_mul_2exp_si(bound, bound, -zero_bits(prec));
	bool zero = mag_cmp(arb_radref(d), bound) <= 0;
	mag_clear(bound);
	if (zero)
		out->decision = BALL_ZERO_WITHIN_BOUND;
	*reason = BALL_REASON_CANCELLATION;
	return zero;
}

ball_decision ball_claim_decide(ball_claim *claim, const mpq_t *values, ball_verdict *out)
{
	return ball_claim_decide_from(claim, values, 64, out);
}

ball_decision ball_claim_decide_from(ball_claim *claim, const mpq_t *values, slong least, ball_verdict *out)
{
	static const slong precisions[] = {64, 256, 1024, 4096, 16384, BALL_MAX_PRECISION};
	*out = (ball_verdict){.decision = BALL_UNDECIDED, .reason = BALL_REASON_NONE};
	ball_reason reason = BALL_REASON_NONE;
	arb_t d;
	arb_init(d);
	bool decided = false;
	for (size_t k = 0; k < sizeof precisions / sizeof *precisions && !decided; k++) {
		slong prec = precisions[k];
		if (prec < least && prec != BALL_MAX_PRECISION)
			continue;
		out->bits = prec;
		for (size_t i = 0; i < claim->natoms; i++)
			ball_set_mpq(claim->values + i, values[i], prec);
		if (ball_run(claim->prog, claim->values, prec, claim->out, claim->status) == BALL_FAILED) {
			reason = BALL_REASON_INTERRUPTED;
			break;
		}
		decided = decide_at(claim, prec, d, out, &reason);
	}
	arb_clear(d);
	if (out->decision == BALL_UNDECIDED)
		out->reason = reason;
	return out->decision;
}

ball_decision ball_compare_zero(expr_ctx *ctx, const expr *difference, const expr *lhs, const expr *rhs,
                                size_t natoms, const expr *const *atoms, const ball_generic *generic,
                                const mpq_t *values, ball_verdict *out)
{
	ball_claim *claim = ball_claim_new(ctx, difference, lhs, rhs, natoms, atoms, generic, NULL);
	if (!claim) {
		*out = (ball_verdict){.decision = BALL_UNDECIDED, .reason = BALL_REASON_UNBOUND};
		return BALL_UNDECIDED;
	}
	ball_decision decision = ball_claim_decide(claim, values, out);
	ball_claim_free(claim);
	return decision;
}
