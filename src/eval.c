/* eval.c - compile expressions to straight-line code and run it over blocks. */
#include <config.h>

#include "eval.h"

#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "expr-internal.h"
#include "rat.h"
#include "vector.h"
#include "xalloc.h"

typedef enum op { OP_CONST, OP_VAR, OP_ADD, OP_MUL, OP_POWI, OP_POWD, OP_POWR, OP_POWX, OP_SQRT, OP_FUN } op;

typedef struct instr {
	op code;
	double constant;  /* OP_CONST value; OP_MUL coefficient; OP_POWD exponent */
	long power;	  /* OP_POWI exponent */
	size_t a, b;	  /* operands (registers) */
	size_t *list;	  /* OP_ADD, OP_MUL operands */
	size_t nlist;
	expr_builtin fn;  /* OP_FUN */
	size_t var;	  /* OP_VAR */
	bool uniform;	  /* the same at every point of a call (eval_set_uniform) */
	size_t direct;	  /* o + 1 when written straight into output o, else 0 */
} instr;

struct eval_prog {
	instr *code;
	size_t ncode, capcode;
	size_t *outputs;
	size_t nout, nvars;
};

typedef struct compiler {
	expr_ctx *ctx;
	eval_prog *prog;
	expr_map regs; /* node -> NUM register index + 1 */
	size_t nvars;
	const expr *const *vars;
	const expr *bad;
} compiler;

static size_t emit_instr(compiler *c, instr in)
{
	eval_prog *p = c->prog;
	if (p->ncode == p->capcode) {
		p->capcode = p->capcode ? p->capcode * 2 : 64;
		p->code = xreallocarray(p->code, p->capcode, sizeof *p->code);
	}
	in.uniform = in.code == OP_CONST;
	p->code[p->ncode] = in;
	return p->ncode++;
}

static bool compile_node(compiler *c, const expr *e, size_t *reg);

static bool compile_power(compiler *c, const expr *base, const expr *exponent, size_t *reg)
{
	size_t b;
	if (!compile_node(c, base, &b))
		return false;
	if (exponent->kind == EXPR_NUM) {
		const __mpq_struct *q = exponent->u.num;
		if (mpq_cmp_ui(q, 1, 1) == 0) {
			*reg = b; /* x^1 = x: no instruction */
		} else if (rat_fits_long(q)) {
			*reg = emit_instr(c, (instr){.code = OP_POWI, .a = b, .power = mpz_get_si(mpq_numref(q))});
		} else if (mpq_cmp_ui(q, 1, 2) == 0) {
			*reg = emit_instr(c, (instr){.code = OP_SQRT, .a = b});
		} else if (mpz_odd_p(mpq_denref(q))) {
			/* x^(p/q) with q odd is the real root for x < 0 (the convention of
			 * expr.h): (-8)^(1/3) = -2, (-8)^(2/3) = 4 */
			*reg = emit_instr(c, (instr){.code = OP_POWR, .a = b, .constant = rat_to_double(q),
						     .power = mpz_odd_p(mpq_numref(q)) ? -1 : 1});
		} else {
			*reg = emit_instr(c, (instr){.code = OP_POWD, .a = b, .constant = rat_to_double(q)});
		}
		return true;
	}
	size_t x;
	if (!compile_node(c, exponent, &x))
		return false;
	*reg = emit_instr(c, (instr){.code = OP_POWX, .a = b, .b = x});
	return true;
}

static bool compile_node(compiler *c, const expr *e, size_t *reg)
{
	const expr *known = expr_map_get(&c->regs, e);
	if (known) {
		*reg = (size_t)mpz_get_ui(mpq_numref(known->u.num)) - 1;
		return true;
	}
	switch (e->kind) {
	case EXPR_NUM:
		*reg = emit_instr(c, (instr){.code = OP_CONST, .constant = rat_to_double(e->u.num)});
		break;
	case EXPR_SYM: {
		size_t v = 0;
		while (v < c->nvars && c->vars[v] != e)
			v++;
		if (v == c->nvars) {
			c->bad = e;
			return false;
		}
		*reg = emit_instr(c, (instr){.code = OP_VAR, .var = v});
		break;
	}
	case EXPR_ADD: {
		size_t *list = xmalloc(e->nops * sizeof *list);
		for (size_t i = 0; i < e->nops; i++)
			if (!compile_node(c, e->u.add.terms[i], &list[i])) {
				free(list);
				return false;
			}
		*reg = emit_instr(c, (instr){.code = OP_ADD, .list = list, .nlist = e->nops});
		break;
	}
	case EXPR_MUL: {
		size_t *list = xmalloc(e->nops * sizeof *list);
		for (size_t i = 0; i < e->nops; i++)
			if (!compile_power(c, e->u.mul.bases[i], e->u.mul.exps[i], &list[i])) {
				free(list);
				return false;
			}
		*reg = emit_instr(c, (instr){.code = OP_MUL, .list = list, .nlist = e->nops,
					     .constant = rat_to_double(e->u.mul.coef)});
		break;
	}
	case EXPR_FUN: {
		size_t a;
		if (!compile_node(c, e->u.fun.arg, &a))
			return false;
		*reg = emit_instr(c, (instr){.code = OP_FUN, .a = a, .fn = e->u.fun.fn});
		break;
	}
	case EXPR_FAPP:
		c->bad = e;
		return false;
	}
	expr_map_put(&c->regs, e, expr_int(c->ctx, (long)*reg + 1));
	return true;
}

/* An instruction computed per point whose register is an output writes its
 * result straight into the first such output (eval_run then copies nothing
 * for it); constants, uniform instructions and variables are copied. */
static void assign_outputs(eval_prog *prog)
{
	for (size_t i = 0; i < prog->ncode; i++)
		prog->code[i].direct = 0;
	for (size_t o = 0; o < prog->nout; o++) {
		instr *in = &prog->code[prog->outputs[o]];
		if (!in->uniform && in->code != OP_VAR && !in->direct)
			in->direct = o + 1;
	}
}

eval_prog *eval_compile(expr_ctx *ctx, size_t nout, const expr *const *outputs, size_t nvars,
			const expr *const *vars, const expr **bad)
{
	eval_prog *prog = xcalloc(1, sizeof *prog);
	prog->nout = nout;
	prog->nvars = nvars;
	prog->outputs = xmalloc((nout ? nout : 1) * sizeof *prog->outputs);
	compiler c = {.ctx = ctx, .prog = prog, .nvars = nvars, .vars = vars};
	for (size_t o = 0; o < nout; o++) {
		if (!outputs[o] || !compile_node(&c, outputs[o], &prog->outputs[o])) {
			if (bad)
				*bad = c.bad;
			expr_map_free(&c.regs);
			eval_free(prog);
			return NULL;
		}
	}
	expr_map_free(&c.regs);
	assign_outputs(prog);
	return prog;
}

void eval_free(eval_prog *prog)
{
	if (!prog)
		return;
	for (size_t i = 0; i < prog->ncode; i++)
		free(prog->code[i].list);
	free(prog->code);
	free(prog->outputs);
	free(prog);
}

double eval_ncdf(double x)
{
	return 0.5 * erfc(-x / sqrt(2.0));
}

double eval_npdf(double x)
{
	return 0.39894228040143267794 * exp(-0.5 * x * x);
}

static double apply_builtin(expr_builtin fn, double x)
{
	switch (fn) {
	case EXPR_F_EXP: return exp(x);
	case EXPR_F_LOG: return log(x);
	case EXPR_F_SIN: return sin(x);
	case EXPR_F_COS: return cos(x);
	case EXPR_F_TAN: return tan(x);
	case EXPR_F_SINH: return sinh(x);
	case EXPR_F_COSH: return cosh(x);
	case EXPR_F_TANH: return tanh(x);
	case EXPR_F_ERF: return erf(x);
	case EXPR_F_NCDF: return eval_ncdf(x);
	case EXPR_F_NPDF: return eval_npdf(x);
	case EXPR_F_ABS: return fabs(x);
	case EXPR_F_COUNT: break;
	}
	return NAN;
}

static double powi(double x, long n)
{
	if (n < 0)
		return 1.0 / powi(x, -n);
	double result = 1.0;
	while (n) {
		if (n & 1)
			result *= x;
		x *= x;
		n >>= 1;
	}
	return result;
}

enum { BLOCK = 128 };

/* log over n points, written so the compiler can vectorise it: the method
 * of fdlibm's e_log.c (Sun Microsystems, 1993; from memory), without its
 * branches.  x = 2^k m with m in [sqrt(2)/2, sqrt(2)), f = m - 1 (exact),
 * s = f/(2 + f), log(1 + f) = f - (f^2/2 - s (f^2/2 + R(s^2))) with R the
 * degree-14 even polynomial Lg1 s^2 + ... + Lg7 s^14, and k log 2 added in two
 * parts (ln2_hi has trailing zero bits, so k ln2_hi is exact).  fdlibm bounds
 * the error below 1 ulp; the unit tests compare with libm.  Zero, negative,
 * subnormal, infinite and NaN inputs go to libm's log afterwards. */
ITOX_VECTOR static void log_block(size_t n, const double *restrict x, double *restrict r)
{
	static const double ln2_hi = 6.93147180369123816490e-01, ln2_lo = 1.90821492927058770002e-10;
	static const double lg1 = 6.666666666666735130e-01, lg2 = 3.999999999940941908e-01,
			    lg3 = 2.857142874366239149e-01, lg4 = 2.222219843214978396e-01,
			    lg5 = 1.818357216161805012e-01, lg6 = 1.531383769920937332e-01,
			    lg7 = 1.479819860511658591e-01;
	const uint64_t mantissa = UINT64_C(0x000fffffffffffff), one = UINT64_C(0x3ff0000000000000);
	const uint64_t magic = UINT64_C(0x4330000000000000); /* 2^52: its low bits hold an integer */
	uint64_t odd = 0;
	/* 2^52 - 1 - the fraction bits of sqrt(2) (0x3ff6a09e667f3bcd, rounded):
	 * adding it carries into bit 52 exactly when the fraction exceeds them */
	const uint64_t above = (UINT64_C(1) << 52) - 1 - UINT64_C(0x0006a09e667f3bcd);
	for (size_t p = 0; p < n; p++) {
		uint64_t bits;
		memcpy(&bits, &x[p], sizeof bits);
		uint64_t frac = bits & mantissa;
		uint64_t high = (frac + above) >> 52; /* 1 when 1.frac > sqrt(2): then m/2 and k + 1 */
		uint64_t mbits = (frac | one) - (high << 52);
		uint64_t ebits = ((bits >> 52) + high) | magic;
		double m, biased;
		memcpy(&m, &mbits, sizeof m);
		memcpy(&biased, &ebits, sizeof biased);
		double k = biased - (0x1.0p52 + 1023.0);
		double f = m - 1.0, s = f / (2.0 + f), z = s * s, w = z * z;
		double t1 = w * (lg2 + w * (lg4 + w * lg6));
		double t2 = z * (lg1 + w * (lg3 + w * (lg5 + w * lg7)));
		double hfsq = 0.5 * f * f;
		r[p] = k * ln2_hi - ((hfsq - (s * (hfsq + (t1 + t2)) + k * ln2_lo)) - f);
		uint64_t e = bits >> 52; /* sign and exponent: 1..2046 for positive normal numbers */
		odd |= ((e - 1) >> 11) | ((e + 1) >> 11);
	}
	if (odd)
		for (size_t p = 0; p < n; p++)
			if (!(x[p] >= DBL_MIN && x[p] <= DBL_MAX))
				r[p] = log(x[p]);
}

/* f(x) over n points, the switch outside the loop so each loop is plain. */
static void apply_builtin_block(expr_builtin fn, size_t n, const double *x, double *r)
{
	switch (fn) {
	case EXPR_F_EXP:
		for (size_t p = 0; p < n; p++)
			r[p] = exp(x[p]);
		return;
	case EXPR_F_LOG:
		log_block(n, x, r);
		return;
	default:
		for (size_t p = 0; p < n; p++)
			r[p] = apply_builtin(fn, x[p]);
		return;
	}
}

/* One instruction over n points: r from the registers src.  An operand that
 * is uniform (code[j].uniform) is read once, as a number: x*u and x + u are
 * the same operations whether u is one number or an array of copies. */
ITOX_VECTOR static void run_instr(const instr *code, const instr *in, const double *const *src, double *r, size_t n)
{
	switch (in->code) {
	case OP_CONST:
	case OP_VAR:
		break; /* placed by eval_run */
	case OP_ADD: {
		size_t j0 = in->list[0];
		const double *x0 = src[j0];
		if (in->nlist == 1) {
			memcpy(r, x0, n * sizeof *r);
			break;
		}
		size_t j1 = in->list[1];
		const double *x1 = src[j1];
		if (code[j0].uniform && code[j1].uniform) {
			const double u = x0[0] + x1[0];
			for (size_t p = 0; p < n; p++)
				r[p] = u;
		} else if (code[j0].uniform) {
			const double u = x0[0];
			for (size_t p = 0; p < n; p++)
				r[p] = u + x1[p];
		} else if (code[j1].uniform) {
			const double u = x1[0];
			for (size_t p = 0; p < n; p++)
				r[p] = x0[p] + u;
		} else {
			for (size_t p = 0; p < n; p++)
				r[p] = x0[p] + x1[p];
		}
		for (size_t k = 2; k < in->nlist; k++) {
			const double *x = src[in->list[k]];
			if (code[in->list[k]].uniform) {
				const double u = x[0];
				for (size_t p = 0; p < n; p++)
					r[p] += u;
			} else {
				for (size_t p = 0; p < n; p++)
					r[p] += x[p];
			}
		}
		break;
	}
	case OP_MUL: {
		const double c = in->constant;
		size_t k = 0;
		if (in->nlist == 0) {
			for (size_t p = 0; p < n; p++)
				r[p] = c;
		} else if (c == 1.0 && in->nlist >= 2) {
			size_t j0 = in->list[0], j1 = in->list[1];
			const double *x0 = src[j0], *x1 = src[j1];
			if (code[j0].uniform && code[j1].uniform) {
				const double u = x0[0] * x1[0];
				for (size_t p = 0; p < n; p++)
					r[p] = u;
			} else if (code[j0].uniform) {
				const double u = x0[0];
				for (size_t p = 0; p < n; p++)
					r[p] = u * x1[p];
			} else if (code[j1].uniform) {
				const double u = x1[0];
				for (size_t p = 0; p < n; p++)
					r[p] = x0[p] * u;
			} else {
				for (size_t p = 0; p < n; p++)
					r[p] = x0[p] * x1[p];
			}
			k = 2;
		} else if (c == 1.0) {
			memcpy(r, src[in->list[0]], n * sizeof *r);
			k = 1;
		} else {
			const double *x0 = src[in->list[0]];
			if (code[in->list[0]].uniform) {
				const double u = c * x0[0];
				for (size_t p = 0; p < n; p++)
					r[p] = u;
			} else {
				for (size_t p = 0; p < n; p++)
					r[p] = c * x0[p];
			}
			k = 1;
		}
		for (; k < in->nlist; k++) {
			const double *x = src[in->list[k]];
			if (code[in->list[k]].uniform) {
				const double u = x[0];
				for (size_t p = 0; p < n; p++)
					r[p] *= u;
			} else {
				for (size_t p = 0; p < n; p++)
					r[p] *= x[p];
			}
		}
		break;
	}
	case OP_POWI: {
		const double *x = src[in->a];
		if (in->power == 2)
			for (size_t p = 0; p < n; p++)
				r[p] = x[p] * x[p];
		else if (in->power == -1)
			for (size_t p = 0; p < n; p++)
				r[p] = 1.0 / x[p];
		else
			for (size_t p = 0; p < n; p++)
				r[p] = powi(x[p], in->power);
		break;
	}
	case OP_SQRT: {
		const double *x = src[in->a];
		for (size_t p = 0; p < n; p++)
			r[p] = sqrt(x[p]);
		break;
	}
	case OP_POWD: {
		const double *x = src[in->a];
		for (size_t p = 0; p < n; p++)
			r[p] = pow(x[p], in->constant);
		break;
	}
	case OP_POWR: {
		const double *x = src[in->a];
		double odd = (double)in->power; /* -1: an odd numerator keeps the sign of x */
		for (size_t p = 0; p < n; p++) {
			double v = pow(fabs(x[p]), in->constant);
			r[p] = x[p] < 0 ? odd * v : v;
		}
		break;
	}
	case OP_POWX: {
		const double *x = src[in->a], *y = src[in->b];
		if (code[in->a].uniform)
			for (size_t p = 0; p < n; p++)
				r[p] = pow(x[0], y[p]);
		else if (code[in->b].uniform)
			for (size_t p = 0; p < n; p++)
				r[p] = pow(x[p], y[0]);
		else
			for (size_t p = 0; p < n; p++)
				r[p] = pow(x[p], y[p]);
		break;
	}
	case OP_FUN:
		apply_builtin_block(in->fn, n, src[in->a], r);
		break;
	}
}

void eval_set_uniform(eval_prog *prog, size_t first)
{
	for (size_t i = 0; i < prog->ncode; i++) {
		instr *in = &prog->code[i];
		bool u = true;
		switch (in->code) {
		case OP_CONST: break;
		case OP_VAR: u = in->var >= first; break;
		case OP_ADD:
		case OP_MUL:
			for (size_t k = 0; k < in->nlist; k++)
				u = u && prog->code[in->list[k]].uniform;
			break;
		case OP_POWX: u = prog->code[in->a].uniform && prog->code[in->b].uniform; break;
		default: u = prog->code[in->a].uniform; break;
		}
		in->uniform = u;
	}
	assign_outputs(prog);
}

/* Registers: instruction i writes regs + i*BLOCK, except that a variable
 * that varies is read where it lies (src[i] points into vars), and an
 * output computed per point is written where it belongs (assign_outputs).
 * Constants and uniform instructions (eval_set_uniform) are computed once per
 * call, at the first point (instructions per point read them as numbers);
 * uniform outputs are filled.  Every instruction computes
 * the same operations in the same order as a plain left-to-right
 * evaluation, so results do not depend on the block size: a product
 * c*x1*...*xk is ((c*x1)*x2)..., with c = 1 skipped (1*x1 = x1 exactly), a
 * sum ((x1 + x2) + x3)... */
enum { STACK_CODE = 16 };

ITOX_VECTOR static void run_program(const eval_prog *prog, size_t npoints, const double *vars, double *outputs)
{
	size_t ncode = prog->ncode ? prog->ncode : 1;
	double stack_regs[STACK_CODE * BLOCK];
	const double *stack_src[STACK_CODE];
	double *regs = ncode <= STACK_CODE ? stack_regs : xmalloc(ncode * BLOCK * sizeof *regs);
	const double **src = ncode <= STACK_CODE ? stack_src : xmalloc(ncode * sizeof *src);
	for (size_t i = 0; i < prog->ncode; i++) {
		const instr *in = &prog->code[i];
		double *r = regs + i * BLOCK;
		src[i] = r;
		if (!in->uniform || npoints == 0)
			continue;
		if (in->code == OP_CONST)
			r[0] = in->constant;
		else if (in->code == OP_VAR)
			r[0] = vars[in->var * npoints];
		else
			run_instr(prog->code, in, src, r, 1);
	}
	for (size_t o = 0; o < prog->nout && npoints; o++)
		if (prog->code[prog->outputs[o]].uniform) {
			double value = src[prog->outputs[o]][0], *out = outputs + o * npoints;
			for (size_t p = 0; p < npoints; p++)
				out[p] = value;
		}
	for (size_t start = 0; start < npoints; start += BLOCK) {
		size_t n = npoints - start < BLOCK ? npoints - start : BLOCK;
		for (size_t i = 0; i < prog->ncode; i++) {
			const instr *in = &prog->code[i];
			if (in->uniform)
				continue;
			if (in->code == OP_VAR) {
				src[i] = vars + in->var * npoints + start;
			} else {
				double *r = in->direct ? outputs + (in->direct - 1) * npoints + start : regs + i * BLOCK;
				run_instr(prog->code, in, src, r, n);
				src[i] = r;
			}
		}
		for (size_t o = 0; o < prog->nout; o++) {
			const instr *in = &prog->code[prog->outputs[o]];
			if (!in->uniform && in->direct != o + 1)
				memcpy(outputs + o * npoints + start, src[prog->outputs[o]], n * sizeof(double));
		}
	}
	if (src != stack_src)
		free(src);
	if (regs != stack_regs)
		free(regs);
}

/* The clones are static: clang resolves a multiversioned function only
 * where the attribute is seen, so other files call this plain function. */
void eval_run(const eval_prog *prog, size_t npoints, const double *vars, double *outputs)
{
	run_program(prog, npoints, vars, outputs);
}

double eval_at(expr_ctx *ctx, const expr *e, size_t nvars, const expr *const *vars,
	       const double *values, bool *ok)
{
	eval_prog *prog = eval_compile(ctx, 1, &e, nvars, vars, NULL);
	if (!prog) {
		if (ok)
			*ok = false;
		return NAN;
	}
	double result;
	eval_run(prog, 1, values, &result);
	eval_free(prog);
	if (ok)
		*ok = true;
	return result;
}
