/* ast.h - the syntax tree built by the parser (grammar/itox.y).
 *
 * Ownership: every node of one parse belongs to the ast_list that the parse
 * returned; ast_list_free() frees them all.  Nodes are plain data: the parser
 * does no name resolution, the session gives names their meaning.
 */
#ifndef ITOX_AST_H
#define ITOX_AST_H

#include <stdbool.h>
#include <stddef.h>

/* A source span; lines and columns count from 1 (columns in bytes). */
typedef struct ast_loc {
	int first_line, first_column;
	int last_line, last_column;
} ast_loc;

/* Node kinds.  Fields used: text (a name or a literal), a, b, c (children),
 * items/nitems (a list).  Each line says which fields are set. */
#define AST_KINDS(X)                                                                     \
	/* expressions */                                                                      \
	X(NUM)		  /* text: literal as written ("0.05", "1e-3", "12") */                 \
	X(NAME)		  /* text: identifier (also dS, dt, f_x, f_{x1,x2}) */                 \
	X(NEG)		  /* a */                                                              \
	X(ADD)		  /* a + b */                                                          \
	X(SUB)		  /* a - b */                                                          \
	X(MUL)		  /* a * b */                                                          \
	X(DIV)		  /* a / b */                                                          \
	X(POW)		  /* a ^ b */                                                          \
	X(CALL)		  /* text: function name; items: arguments */                         \
	X(PARTIAL)	  /* partial(a, items...): items are NAME nodes */                    \
	X(DIFF)		  /* d(a): the operator form, d directly before '(' */                \
	X(QUERY)	  /* text: drift, diffusion, generator or qv directly before '('; items */ \
	/* pieces of statements */                                                             \
	X(ASSIGN)	  /* text = a   (at/over lists, measure shifts) */                      \
	X(INTERVAL)	  /* [a, b] */                                                         \
	X(COND)		  /* text: name; op: relation; a: bound or INTERVAL */                 \
	X(RELATION)	  /* a op b: two expressions (op REL_IN: b is an INTERVAL) */         \
	X(CONCRETE)	  /* text(items) = a: a concrete form in check ... where; items NAME */ \
	/* statements */                                                                       \
	X(S_EXPR)	  /* a: a bare expression (may contain differentials) */              \
	X(S_D)		  /* d a */                                                            \
	X(S_DRIFT)	  /* drift a */                                                        \
	X(S_DIFFUSION)	  /* diffusion a */                                                    \
	X(S_GENERATOR)	  /* generator a */                                                    \
	X(S_QV)		  /* qv a [, b] (b NULL for one argument) */                          \
	X(S_PDE)	  /* pde text(items) [discount a]: items NAME args, a may be NULL */  \
	X(S_FORWARD)	  /* forward text(items): items NAME args */                           \
	X(S_COEFFICIENTS) /* coefficients a in items: items NAME variables */                 \
	X(S_MOMENTS)	  /* moments text, a: a the NUM order K */                             \
	X(S_SDE_ITO)	  /* sde text */                                                       \
	X(S_SDE_STRAT)	  /* sde text stratonovich */                                          \
	X(S_PARAM)	  /* param: items are COND nodes (op REL_NONE when unconstrained) */ \
	X(S_ASSUME)	  /* assume: items are COND and RELATION nodes */                     \
	X(S_NOISE)	  /* noise: items are NAME nodes */                                   \
	X(S_CORR)	  /* corr(a, b) = c: a, b NAME nodes */                               \
	X(S_FUNC)	  /* func text(items): items NAME nodes */                             \
	X(S_SDE)	  /* text = a: text is the differential name as written ("dS") */    \
	X(S_STRAT_SDE)	  /* stratonovich text = a */                                         \
	X(S_LET)	  /* let text = a */                                                   \
	X(S_MEASURE)	  /* measure text: items are ASSIGN nodes (text "dW", a: dZ - ...) */ \
	X(S_UNDER)	  /* a: a query statement; text: measure name */                      \
	X(S_STATE)	  /* state text = a where b: b is an ASSIGN (old = expression) */     \
	X(S_CLAIM)	  /* claim a = b: a is an expression or S_D/S_DRIFT/... query node */ \
	X(S_CHECK)	  /* check [d] a [= b] at items [over extra] [where c]: c a HOLDER of CONCRETE */ \
	X(S_SHOW)	  /* show [text]: text NULL for all */                                 \
	X(S_SAVE)	  /* save text (a path) */                                             \
	X(S_LOAD)	  /* load text (a path) */                                             \
	X(S_FORGET)	  /* forget text (a declared name) */                                  \
	X(S_FORMAT)	  /* format text */                                                    \
	X(S_HELP)	  /* help [text] */                                                    \
	X(S_QUIT)	  /* quit */

typedef enum ast_kind {
#define AST_ENUM(name) AST_##name,
	AST_KINDS(AST_ENUM)
#undef AST_ENUM
		AST_KIND_COUNT
} ast_kind;

/* Relations in COND nodes. */
typedef enum ast_rel { REL_NONE, REL_GT, REL_GE, REL_LT, REL_LE, REL_IN } ast_rel;

typedef struct ast_node ast_node;
struct ast_node {
	ast_kind kind;
	ast_loc loc;	/* the whole span of the node */
	char *text;	/* name, literal or path; NULL when unused */
	ast_rel op;	/* COND and RELATION only */
	ast_node *a, *b, *c;
	ast_node **items; /* a list (arguments, declarations, at-assignments) */
	size_t nitems;
	ast_node **extra; /* S_CHECK: the over-assignments */
	size_t nextra;
	bool with_d;	/* S_CHECK: written as "check d ..." */
	bool verbose;	/* S_CHECK: "verbose" was given */
};

/* What a parse error is: a mistake in the text, or a limit of the parser. */
typedef enum ast_error_kind {
	AST_ERROR_SYNTAX,  /* the text does not follow the grammar */
	AST_ERROR_NESTING, /* nesting deeper than max_depth (a limit) */
	AST_ERROR_SIZE,	   /* the whole input is larger than the parser takes */
} ast_error_kind;

/* One parsed source: the statements in order, and the first syntax error if any. */
typedef struct ast_error {
	bool present;
	ast_error_kind kind;
	bool incomplete; /* the input ended inside an open statement (REPL: read more) */
	ast_loc loc;	 /* where to put the caret */
	char message[512];
} ast_error;

typedef struct ast_list {
	ast_node **stmts;
	size_t n;
	ast_error error; /* statements before the error are in stmts */
	/* private: the arena of all nodes */
	ast_node **all;
	size_t nall, capall;
} ast_list;

/* Parse a whole source text.  Never fails hard: on a syntax error, the
 * statements before it are returned and list->error describes the error.
 * max_depth bounds nesting (parentheses, unary minus) so deep input gives an
 * error instead of exhausting the stack. */
void ast_parse(const char *source, size_t length, int max_depth, ast_list *list);
void ast_list_free(ast_list *list);

/* The name of a node kind, for tests and debugging ("NUM", "S_CLAIM"). */
const char *ast_kind_name(ast_kind kind);

/* Write a node as an S-expression, e.g. (ADD (NAME x) (NUM 1)); for tests. */
char *ast_to_sexpr(const ast_node *node);

/* Every reserved word of the language, NULL-terminated (for completion, help). */
extern const char *const ast_keywords[];

#endif
