/* print-internal.h - the display tree and the printer, shared by
 * print-build.c (which builds display trees) and print.c (which writes
 * them); not part of the library's interface. */
#ifndef ITOX_PRINT_INTERNAL_H
#define ITOX_PRINT_INTERNAL_H

#include "expr-internal.h"
#include "print.h"

/* The kinds of display nodes: numbers are >= 0, a sign is a D_NEG. */
typedef enum dkind { D_NUM, D_SYM, D_FUN, D_FAPP, D_SUM, D_PROD, D_NEG } dkind;

/* A display node (below) and one factor of a display product. */
typedef struct dnode dnode;
typedef struct dfactor {
	dnode *base;
	const expr *base_expr; /* the canonical base, when known */
	const expr *exponent;  /* a NUM, or a symbolic exponent */
	dnode *exp_display;    /* display of a symbolic exponent */
	int rank;              /* sort key for display order */
} dfactor;

/* A node of the display tree: what the writers print, grouped for people. */
struct dnode {
	dkind kind;
	mpq_t num;     /* D_NUM value (>= 0); D_PROD coefficient (> 0) */
	const expr *e; /* D_SYM, D_FUN, D_FAPP: the node */
	dnode *child;  /* D_FUN argument; D_NEG operand */
	dnode **items; /* D_SUM terms; D_FAPP arguments */
	size_t n;
	dfactor *factors; /* D_PROD */
	size_t nfactors;
	size_t order;  /* in a collected sum: position of its first term in the node order */
	bool declared; /* D_FAPP at its declared arguments (written without them) */
	int c_tail;    /* C, D_FUN: written as a tail (PRN_TAIL_*; prn_c_tails) */
};

/* How C writes a function node that prn_c_tails made of a difference:
 * Phi(-x), erfc(x) = 1 - erf(x), erfc(-x) = 1 + erf(x). */
enum { PRN_TAIL_NONE, PRN_TAIL_PHI_REFLECTED, PRN_TAIL_ERFC, PRN_TAIL_ERFC_REFLECTED };

/* The state of one printing: the nodes made, the memos of the building and
 * the context of the writing. */
typedef struct printer {
	expr_ctx *ctx;
	prn_format format;
	dnode **blocks; /* every node made: blocks of 8, 16, 32, ... nodes */
	size_t nblocks, block_used, block_size;
	expr_map rank_memo; /* node -> NUM holding its max symbol rank */
	bool frac_part;     /* LaTeX: writing the only factor of a \\frac part */
	const prn_abbrev *abbrev;
	bool top;                     /* building the top-level node (never abbreviated) */
	int depth;                    /* nesting of build_add: collection stops past a bound */
	const expr *building[64]; /* the sums being built, innermost last (a cycle guard) */
	size_t nbuilding;
	bool plain_states;            /* LaTeX: S rather than S_t */
	const expr *const *sum_terms; /* the terms of the sum being collected */
	size_t nsum_terms;
	expr_map order_map; /* term -> NUM position + 1, for the sum being collected */
	prn_c_calls *calls; /* C: the generic partials called, or NULL */
	bool in_exponent;   /* LaTeX: writing an exponent (no stacked fractions there) */
	bool followed;      /* LaTeX: the factor being written has another after it */
} printer;

/* The display tree of e; print-build.c. */
dnode *prn_build(printer *p, const expr *e);
/* The display tree of the top-level node e, which is never abbreviated. */
static inline dnode *prn_build_top(printer *p, const expr *e)
{
	p->top = true;
	return prn_build(p, e);
}
/* C: rewrite each sum c + k*Phi(u) with c, k of opposite signs and |c| >= |k|
 * as (c + k) - k*Phi(-u), and each c + k*erf(u) with |c| >= |k| as
 * (c + k) - k*erfc(u) (opposite signs) or (c - k) + k*erfc(-u) (same
 * signs): the canonical form writes Phi(-a) as 1 - Phi(a), which doubles
 * round to 0 from about a = 8.3 on, where Phi(-a) itself is accurate; print-build.c. */
void prn_c_tails(printer *p, dnode *d);
/* Free the nodes a printer made and its memos; print-build.c. */
void prn_printer_free(printer *p);

#endif
