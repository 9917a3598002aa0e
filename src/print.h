/* print.h - writers for expressions: text, LaTeX and C.
 *
 * The printers turn a canonical node into a display tree made for people:
 * terms grouped by their state part, common factors pulled out
 * (kappa*(theta - v)), negative powers written as fractions, sqrt for ^(1/2).
 * The text form parses back to the very same node.
 */
#ifndef ITOX_PRINT_H
#define ITOX_PRINT_H

#include "expr.h"

/* PRN_LATEX_PLAIN is LaTeX without the _t of states (for a PDE in S, v). */
typedef enum prn_format { PRN_TEXT, PRN_LATEX, PRN_C, PRN_LATEX_PLAIN } prn_format;

/* Display classes of symbols (set with expr_sym_set_rank): parameters print
 * before time, states and noises in products; LaTeX subscripts states with t. */
enum { PRN_RANK_PARAM = 0, PRN_RANK_TIME = 1, PRN_RANK_STATE = 2, PRN_RANK_NOISE = 3 };

/* The expression in the given format, as a new string to free. */
char *prn_expr(expr_ctx *ctx, const expr *e, prn_format format);

/* Abbreviations: subexpressions equal to one of nodes[i] print as names[i]
 * (a let definition: Phi(d1)); the top-level node itself is never abbreviated.
 * used[i] is set for each name that was used (may be NULL). */
typedef struct prn_abbrev {
	size_t n;
	const expr *const *nodes;
	const char *const *names;
	bool *used;
} prn_abbrev;
char *prn_expr_abbrev(expr_ctx *ctx, const expr *e, prn_format format, const prn_abbrev *abbrev);

/* The right side of a differential, dt*drift + sum_k dw[k]*d(noises[k]):
 * terms with a zero coefficient are left out, an all-zero one is "0".
 * stratonovich: LaTeX writes b \circ dW.  The sign and brackets of each
 * term come from the display tree of its coefficient. */
typedef struct prn_diff {
	const expr *dt;
	const expr *const *dw;
	const expr *const *noises; /* the increments' names (symbols) */
	size_t n;
	bool stratonovich;
} prn_diff;
char *prn_differential(expr_ctx *ctx, const prn_diff *diff, prn_format format, const prn_abbrev *abbrev);

/* The generic partials a C expression calls (f_x(t, x) -> "f_x", 2 arguments),
 * collected so that a translation unit can declare them. */
typedef struct prn_c_calls {
	char **names;
	size_t *nargs;
	size_t n;
} prn_c_calls;
void prn_c_calls_free(prn_c_calls *calls);
/* prn_expr_abbrev that also collects the calls of a C expression (calls may be NULL). */
char *prn_expr_c(expr_ctx *ctx, const expr *e, prn_format format, const prn_abbrev *abbrev, prn_c_calls *calls);

/* Is e a generic function at its declared arguments (f_x, written without them)? */
bool prn_fapp_declared(const expr *e);

/* A lower estimate of the length of e written out in text (names, numbers
 * and one separator between operands, each occurrence of a shared node
 * counted), capped at cap; the printers' work grows with it.  Nodes of the
 * abbreviations count as their names. */
size_t prn_length_estimate(const expr *e, const prn_abbrev *abbrev, size_t cap);

/* The plain printer: canonical order, no grouping (for debugging and tests). */
char *prn_expr_flat(expr_ctx *ctx, const expr *e);

/* LaTeX spelling of an identifier (Greek letters, subscripts); new string. */
char *prn_latex_name(const char *name, bool time_subscript);

/* The text name of a generic function's partial (f, f_x, f_tx, f_{x1,x2}),
 * or NULL when e is not a FAPP; new string. */
char *prn_fapp_name(const expr *e);

/* Append text to buf as a JSON string literal (with quotes). */
struct xbuf;
void prn_json_string(struct xbuf *buf, const char *text);

#endif
