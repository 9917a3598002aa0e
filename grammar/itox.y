/* itox.y - the grammar of the itox model language (see grammar/README.md).
 *
 * A pure LALR(1) parser with exact (LAC) lookahead sets for its messages.
 * Actions are thin: they call the ast_ constructors of src/ast.c, which put
 * every node into the arena of the ast_list being built, so nothing a
 * failed parse drops can leak and no %destructor is needed.
 */

%require "3.6"
%define api.pure full
%define api.prefix {itox_yy}
%define api.token.prefix {TOK_}
%define api.location.type {ast_loc}
%define parse.error custom
%define parse.lac full
%define lr.default-reduction accepting
%locations
%expect 0

%parse-param {yyscan_t scanner} {struct itox_parse_state *ps}
%lex-param {yyscan_t scanner}

%code requires {
#include <stdbool.h>
#include <stddef.h>
#include "ast.h"

#ifndef YY_TYPEDEF_YY_SCANNER_T
#define YY_TYPEDEF_YY_SCANNER_T
typedef void *yyscan_t;
#endif

/* The reserved words: the one list behind ast_keywords[] and the
 * scanner's keyword lookup (word, token name without TOK_). */
#define ITOX_KEYWORDS(X)                                                      \
	X(param, PARAM) X(assume, ASSUME) X(noise, NOISE) X(corr, CORR)       \
	X(func, FUNC) X(let, LET) X(stratonovich, STRATONOVICH) X(sde, SDE)   \
	X(measure, MEASURE) X(under, UNDER) X(state, STATE) X(where, WHERE)   \
	X(claim, CLAIM) X(check, CHECK) X(at, AT) X(over, OVER)               \
	X(verbose, VERBOSE) X(show, SHOW) X(save, SAVE) X(load, LOAD)         \
	X(format, FORMAT) X(help, HELP) X(quit, QUIT) X(partial, PARTIAL)     \
	X(forget, FORGET)                                                     \
	X(drift, DRIFT) X(diffusion, DIFFUSION) X(generator, GENERATOR)       \
	X(qv, QV) X(pde, PDE) X(discount, DISCOUNT) X(in, IN)                 \
	X(coefficients, COEFFICIENTS) X(forward, FORWARD) X(moments, MOMENTS) X(d, D)

/* An open '(' or '[' that has not been closed yet. */
struct itox_open_bracket {
	ast_loc loc;
	int run;		     /* the scanner's run before the bracket */
	char bracket;
};

/* The state shared by the scanner and the parser during one ast_parse(). */
struct itox_parse_state {
	ast_list *list;
	int max_depth;
	int line, column;	     /* position of the next unread byte */
	int prev_line, prev_column;  /* position before the current match */
	int last;		     /* class of the previous token (scanner) */
	int run;		     /* unary operators and '^' in a row */
	struct itox_open_bracket *open; /* the open brackets, innermost last */
	size_t depth, capopen;
	char last_text[48];	     /* the text of the lookahead, for messages */
};
}

%code provides {
/* The scanner (grammar/itox-scan.l). */
int itox_yylex(ITOX_YYSTYPE *value, ITOX_YYLTYPE *loc, yyscan_t scanner);
/* Scan and parse source into ps->list (ps is set up by ast_parse). */
void itox_scan_parse(const char *source, size_t length, struct itox_parse_state *ps);

/* Constructors used by the parser actions (src/ast.c).  All nodes go into
 * the arena of list; a "holder" is a node whose items grow while a list is
 * parsed and whose kind is set by ast_finish(). */
ast_node *ast_new(ast_list *list, ast_kind kind, const ast_loc *loc);
ast_node *ast_leaf(ast_list *list, ast_kind kind, const char *text, size_t length,
		   const ast_loc *loc);
ast_node *ast_unary(ast_list *list, ast_kind kind, ast_node *a, const ast_loc *loc);
ast_node *ast_binary(ast_list *list, ast_kind kind, ast_node *a, ast_node *b,
		     const ast_loc *loc);
ast_node *ast_named(ast_list *list, ast_kind kind, const ast_node *name, ast_node *a,
		    ast_node *b, const ast_loc *loc);
ast_node *ast_holder(ast_list *list, ast_node *first, const ast_loc *loc);
ast_node *ast_append(ast_node *holder, ast_node *item);
ast_node *ast_finish(ast_node *holder, ast_kind kind, const ast_node *name, ast_node *a,
		     const ast_loc *loc);
ast_node *ast_cond(ast_list *list, const ast_node *name, ast_rel op, ast_node *bound,
		   const ast_loc *loc);
ast_node *ast_relation(ast_list *list, ast_node *lhs, ast_rel op, ast_node *rhs,
		       const ast_loc *loc);
ast_node *ast_param(ast_node *holder, ast_rel op, ast_node *bound, const ast_loc *loc);
/* check: opts is NULL or ast_check_opts(over list, where list). */
ast_node *ast_check_opts(ast_list *list, ast_node *over, ast_node *where, const ast_loc *loc);
ast_node *ast_check(ast_list *list, bool with_d, ast_node *a, ast_node *b,
		    ast_node *at, ast_node *opts, bool verbose, const ast_loc *loc);
void ast_push_stmt(ast_list *list, ast_node *stmt);
/* Whether the tree under root is deeper than limit; where: the first node too deep. */
bool ast_too_deep(const ast_node *root, int limit, ast_loc *where);
}

%code {
#include <stdio.h>
#include <string.h>

/* Deep input is stopped by the scanner (see max_depth); this only bounds
 * the parser's own stack for limits set very high. */
#define YYMAXDEPTH 100000

#define L (ps->list)

static void yyerror(const ast_loc *loc, yyscan_t scanner, struct itox_parse_state *ps,
		    const char *message);
static bool statement_fits(struct itox_parse_state *ps, const ast_node *stmt);
}

%union {
	ast_node *node;
	int flag;
}

%token END 0 "end of input"
%token <node> NAME "name" NUM "number" PATH "file name" WORD "topic"
%token NEWLINE "end of line"
%token SEMI ";" PLUS "+" MINUS "-" STAR "*" SLASH "/" CARET "^" EQ "=" COMMA ","
%token COLON ":" LT "<" GT ">" LE "<=" GE ">="
%token LPAREN "(" RPAREN ")" LBRACK "[" RBRACK "]"
%token DOP "d("
%token <node> QOP "query("
%token BADCHAR "bad character" BADSTRING "unterminated string" DEEP "nesting limit"
/* Keep the keywords together, "param" first and "d" last (see is_keyword). */
%token PARAM "param" ASSUME "assume" NOISE "noise" CORR "corr" FUNC "func" LET "let"
%token STRATONOVICH "stratonovich" SDE "sde" MEASURE "measure" UNDER "under"
%token STATE "state" WHERE "where" CLAIM "claim" CHECK "check" AT "at" OVER "over"
%token VERBOSE "verbose" SHOW "show" SAVE "save" LOAD "load" FORMAT "format"
%token FORGET "forget" HELP "help" QUIT "quit" PARTIAL "partial" DRIFT "drift" DIFFUSION "diffusion"
%token GENERATOR "generator" QV "qv" PDE "pde" DISCOUNT "discount" IN "in"
%token COEFFICIENTS "coefficients" FORWARD "forward" MOMENTS "moments" D "d"

%type <node> stmt query dquery claim_lhs decl command expr primary args names
%type <node> param_names conds cond interval assign assigns opt_rhs check_opts opt_discount
%type <node> concretes concrete
%type <flag> relop opt_d opt_verbose

%left "+" "-"
%left "*" "/"
%precedence UMINUS
%right "^"

%%

script:
	  opt_stmt
	| script sep opt_stmt
	;

sep:
	  NEWLINE
	| ";"
	;

opt_stmt:
	  %empty
	| stmt			{ if (!statement_fits(ps, $1))
					YYABORT;
				  ast_push_stmt(L, $1); }
	;

stmt:
	  query
	| query "under" NAME	{ $$ = ast_named(L, AST_S_UNDER, $3, $1, NULL, &@$); }
	| decl
	| command
	;

/* ---------------------------------------------------------------- queries */
query:
	  expr			{ $$ = ast_unary(L, AST_S_EXPR, $1, &@$); }
	| dquery
	| "pde" NAME "(" names ")" opt_discount
				{ $$ = ast_finish($4, AST_S_PDE, $2, $6, &@$); }
	| "forward" NAME "(" names ")"
				{ $$ = ast_finish($4, AST_S_FORWARD, $2, NULL, &@$); }
	| "coefficients" expr "in" names
				{ $$ = ast_finish($4, AST_S_COEFFICIENTS, NULL, $2, &@$); }
	| "moments" NAME "," NUM
				{ $$ = ast_named(L, AST_S_MOMENTS, $2, $4, NULL, &@$); }
	| "sde" NAME		{ $$ = ast_named(L, AST_S_SDE_ITO, $2, NULL, NULL, &@$); }
	| "sde" NAME "stratonovich"
				{ $$ = ast_named(L, AST_S_SDE_STRAT, $2, NULL, NULL, &@$); }
	| "claim" claim_lhs "=" expr
				{ $$ = ast_binary(L, AST_S_CLAIM, $2, $4, &@$); }
	| "check" opt_d expr opt_rhs "at" assigns check_opts opt_verbose
				{ $$ = ast_check(L, $2, $3, $4, $6, $7, $8, &@$); }
	;

/* The queries that take the whole expression up to '=', 'at', 'under' or
 * the end of the statement (they may be the left side of a claim). */
dquery:
	  "d" expr		{ $$ = ast_unary(L, AST_S_D, $2, &@$); }
	| "drift" expr		{ $$ = ast_unary(L, AST_S_DRIFT, $2, &@$); }
	| "diffusion" expr	{ $$ = ast_unary(L, AST_S_DIFFUSION, $2, &@$); }
	| "generator" expr	{ $$ = ast_unary(L, AST_S_GENERATOR, $2, &@$); }
	| "qv" expr		{ $$ = ast_binary(L, AST_S_QV, $2, NULL, &@$); }
	| "qv" expr "," expr	{ $$ = ast_binary(L, AST_S_QV, $2, $4, &@$); }
	;

claim_lhs:
	  expr
	| dquery
	;

opt_discount:
	  %empty		{ $$ = NULL; }
	| "discount" expr	{ $$ = $2; }
	;

opt_d:
	  %empty		{ $$ = 0; }
	| "d"			{ $$ = 1; }
	;

opt_rhs:
	  %empty		{ $$ = NULL; }
	| "=" expr		{ $$ = $2; }
	;

/* over and where, in either order (each list NULL when not given), or NULL
 * for neither. */
check_opts:
	  %empty		{ $$ = NULL; }
	| "over" assigns	{ $$ = ast_check_opts(L, $2, NULL, &@$); }
	| "where" concretes	{ $$ = ast_check_opts(L, NULL, $2, &@$); }
	| "over" assigns "where" concretes
				{ $$ = ast_check_opts(L, $2, $4, &@$); }
	| "where" concretes "over" assigns
				{ $$ = ast_check_opts(L, $4, $2, &@$); }
	;

concretes:
	  concrete		{ $$ = ast_holder(L, $1, &@$); }
	| concretes "," concrete
				{ $$ = ast_append($1, $3); }
	;

concrete:
	  NAME "(" names ")" "=" expr
				{ $$ = ast_finish($3, AST_CONCRETE, $1, $6, &@$); }
	;

opt_verbose:
	  %empty		{ $$ = 0; }
	| "verbose"		{ $$ = 1; }
	;

/* ----------------------------------------------------------- declarations */
decl:
	  NAME "=" expr		{ $$ = ast_named(L, AST_S_SDE, $1, $3, NULL, &@$); }
	| "stratonovich" NAME "=" expr
				{ $$ = ast_named(L, AST_S_STRAT_SDE, $2, $4, NULL, &@$); }
	| "param" param_names	{ $$ = ast_finish($2, AST_S_PARAM, NULL, NULL, &@$); }
	| "param" param_names relop expr
				{ $$ = ast_finish(ast_param($2, $3, $4, &@$), AST_S_PARAM,
						  NULL, NULL, &@$); }
	| "param" param_names "in" interval
				{ $$ = ast_finish(ast_param($2, REL_IN, $4, &@$), AST_S_PARAM,
						  NULL, NULL, &@$); }
	| "assume" conds	{ $$ = ast_finish($2, AST_S_ASSUME, NULL, NULL, &@$); }
	| "noise" names		{ $$ = ast_finish($2, AST_S_NOISE, NULL, NULL, &@$); }
	| "corr" "(" NAME "," NAME ")" "=" expr
				{ ast_node *n = ast_binary(L, AST_S_CORR, $3, $5, &@$);
				  n->c = $8; $$ = n; }
	| "func" NAME "(" names ")"
				{ $$ = ast_finish($4, AST_S_FUNC, $2, NULL, &@$); }
	| "let" NAME "=" expr	{ $$ = ast_named(L, AST_S_LET, $2, $4, NULL, &@$); }
	/* the queries inside the definition taken under a measure: the let runs
	 * as a statement under it */
	| "let" NAME "=" expr "under" NAME
				{ $$ = ast_named(L, AST_S_UNDER, $6,
						 ast_named(L, AST_S_LET, $2, $4, NULL, &@$), NULL, &@$); }
	| "measure" NAME ":" assigns
				{ $$ = ast_finish($4, AST_S_MEASURE, $2, NULL, &@$); }
	| "state" NAME "=" expr "where" assign
				{ $$ = ast_named(L, AST_S_STATE, $2, $4, $6, &@$); }
	;

param_names:
	  NAME			{ $$ = ast_holder(L, ast_cond(L, $1, REL_NONE, NULL, &@1), &@$); }
	| param_names "," NAME	{ $$ = ast_append($1, ast_cond(L, $3, REL_NONE, NULL, &@3)); }
	;

conds:
	  cond			{ $$ = ast_holder(L, $1, &@$); }
	| conds "," cond	{ $$ = ast_append($1, $3); }
	;

/* A single name on the left is a range on that name (COND); any other
 * left side is a relation between two expressions (see ast_relation). */
cond:
	  expr relop expr	{ $$ = ast_relation(L, $1, $2, $3, &@$); }
	| expr "in" interval	{ $$ = ast_relation(L, $1, REL_IN, $3, &@$); }
	;

relop:
	  "<"			{ $$ = REL_LT; }
	| "<="			{ $$ = REL_LE; }
	| ">"			{ $$ = REL_GT; }
	| ">="			{ $$ = REL_GE; }
	;

interval:
	  "[" expr "," expr "]"	{ $$ = ast_binary(L, AST_INTERVAL, $2, $4, &@$); }
	;

assigns:
	  assign		{ $$ = ast_holder(L, $1, &@$); }
	| assigns "," assign	{ $$ = ast_append($1, $3); }
	;

assign:
	  NAME "=" expr		{ $$ = ast_named(L, AST_ASSIGN, $1, $3, NULL, &@$); }
	;

names:
	  NAME			{ $$ = ast_holder(L, $1, &@$); }
	| names "," NAME	{ $$ = ast_append($1, $3); }
	;

/* ---------------------------------------------------------------- session */
command:
	  "show"		{ $$ = ast_new(L, AST_S_SHOW, &@$); }
	| "show" NAME		{ $$ = ast_named(L, AST_S_SHOW, $2, NULL, NULL, &@$); }
	| "format" NAME		{ $$ = ast_named(L, AST_S_FORMAT, $2, NULL, NULL, &@$); }
	| "help"		{ $$ = ast_new(L, AST_S_HELP, &@$); }
	| "help" WORD		{ $$ = ast_named(L, AST_S_HELP, $2, NULL, NULL, &@$); }
	| "save" PATH		{ $$ = ast_named(L, AST_S_SAVE, $2, NULL, NULL, &@$); }
	| "load" PATH		{ $$ = ast_named(L, AST_S_LOAD, $2, NULL, NULL, &@$); }
	| "forget" NAME		{ $$ = ast_named(L, AST_S_FORGET, $2, NULL, NULL, &@$); }
	| "quit"		{ $$ = ast_new(L, AST_S_QUIT, &@$); }
	;

/* ------------------------------------------------------------ expressions */
expr:
	  expr "+" expr		{ $$ = ast_binary(L, AST_ADD, $1, $3, &@$); }
	| expr "-" expr		{ $$ = ast_binary(L, AST_SUB, $1, $3, &@$); }
	| expr "*" expr		{ $$ = ast_binary(L, AST_MUL, $1, $3, &@$); }
	| expr "/" expr		{ $$ = ast_binary(L, AST_DIV, $1, $3, &@$); }
	| expr "^" expr		{ $$ = ast_binary(L, AST_POW, $1, $3, &@$); }
	| "-" expr %prec UMINUS	{ $$ = ast_unary(L, AST_NEG, $2, &@$); }
	| "+" expr %prec UMINUS	{ $$ = $2; }
	| primary
	;

primary:
	  NUM
	| NAME
	| NAME "(" args ")"	{ $$ = ast_finish($3, AST_CALL, $1, NULL, &@$); }
	| "partial" "(" expr "," names ")"
				{ $$ = ast_finish($5, AST_PARTIAL, NULL, $3, &@$); }
	| DOP "(" expr ")"	{ $$ = ast_unary(L, AST_DIFF, $3, &@$); }
	| QOP "(" args ")"	{ $$ = ast_finish($3, AST_QUERY, $1, NULL, &@$); }
	| "(" expr ")"		{ $$ = $2; }
	;

args:
	  expr			{ $$ = ast_holder(L, $1, &@$); }
	| args "," expr		{ $$ = ast_append($1, $3); }
	;

%%

static void set_error(struct itox_parse_state *ps, const ast_loc *loc, ast_error_kind kind,
		      bool incomplete, const char *message)
{
	ast_error *error = &ps->list->error;

	if (error->present)
		return;
	error->present = true;
	error->kind = kind;
	error->incomplete = incomplete;
	error->loc = *loc;
	snprintf(error->message, sizeof error->message, "%s", message);
}

static void set_depth_error(struct itox_parse_state *ps, const ast_loc *loc)
{
	char text[128];

	snprintf(text, sizeof text, "expression nested too deeply (limit %d)", ps->max_depth);
	set_error(ps, loc, AST_ERROR_NESTING, false, text);
}

/* Bison calls this only when its own stack is exhausted. */
static void yyerror(const ast_loc *loc, yyscan_t scanner, struct itox_parse_state *ps,
		    const char *message)
{
	(void)scanner;
	(void)message;
	set_depth_error(ps, loc);
}

/* The scanner stops deep brackets and chains of signs and '^' early; this
 * bounds every other way to build a deep tree (a long a+b+c+... chain). */
static bool statement_fits(struct itox_parse_state *ps, const ast_node *stmt)
{
	ast_loc where;

	if (!ast_too_deep(stmt, ps->max_depth, &where))
		return true;
	set_depth_error(ps, &where);
	return false;
}

/* A growing message buffer. */
struct msg {
	char text[400];
	size_t len;
};

static void msg_add(struct msg *m, const char *piece)
{
	size_t n = strlen(piece);

	if (m->len + n >= sizeof m->text)
		n = sizeof m->text - 1 - m->len;
	memcpy(m->text + m->len, piece, n);
	m->len += n;
	m->text[m->len] = '\0';
}

/* A token's name as the user wrote it, without bison's double quotes. */
static void msg_add_token(struct msg *m, yysymbol_kind_t kind)
{
	const char *name = yysymbol_name(kind);
	size_t n = strlen(name);

	msg_add(m, "'");
	if (n >= 2 && name[0] == '"') {
		char inner[64];

		snprintf(inner, sizeof inner, "%.*s", (int)(n - 2), name + 1);
		msg_add(m, inner);
	} else {
		msg_add(m, name);
	}
	msg_add(m, "'");
}

/* The lookahead, e.g. "name 'x'", "'*'", "end of line". */
static void describe_lookahead(struct msg *m, yysymbol_kind_t kind,
			       const struct itox_parse_state *ps)
{
	switch (kind) {
	case YYSYMBOL_NAME:
		msg_add(m, "name '");
		msg_add(m, ps->last_text);
		msg_add(m, "'");
		break;
	case YYSYMBOL_NUM:
		msg_add(m, "number '");
		msg_add(m, ps->last_text);
		msg_add(m, "'");
		break;
	case YYSYMBOL_NEWLINE:
		msg_add(m, "end of line");
		break;
	case YYSYMBOL_DOP:
		msg_add(m, "'d('");
		break;
	case YYSYMBOL_QOP:
		msg_add(m, "'");
		msg_add(m, ps->last_text);
		msg_add(m, "('");
		break;
	default:
		msg_add_token(m, kind);
		break;
	}
}

static bool is_expression_start(yysymbol_kind_t kind)
{
	return kind == YYSYMBOL_NUM || kind == YYSYMBOL_NAME || kind == YYSYMBOL_LPAREN ||
	       kind == YYSYMBOL_MINUS || kind == YYSYMBOL_PLUS || kind == YYSYMBOL_DOP ||
	       kind == YYSYMBOL_QOP || kind == YYSYMBOL_PARTIAL;
}

static bool is_operator(yysymbol_kind_t kind)
{
	return kind == YYSYMBOL_PLUS || kind == YYSYMBOL_MINUS || kind == YYSYMBOL_STAR ||
	       kind == YYSYMBOL_SLASH || kind == YYSYMBOL_CARET;
}

static bool is_statement_end(yysymbol_kind_t kind)
{
	return kind == YYSYMBOL_YYEOF || kind == YYSYMBOL_NEWLINE || kind == YYSYMBOL_SEMI;
}

static bool is_statement_keyword(yysymbol_kind_t kind)
{
	switch (kind) {
	case YYSYMBOL_PARAM: case YYSYMBOL_ASSUME: case YYSYMBOL_NOISE: case YYSYMBOL_CORR:
	case YYSYMBOL_FUNC: case YYSYMBOL_LET: case YYSYMBOL_STRATONOVICH: case YYSYMBOL_SDE:
	case YYSYMBOL_MEASURE: case YYSYMBOL_STATE: case YYSYMBOL_CLAIM: case YYSYMBOL_CHECK:
	case YYSYMBOL_SHOW: case YYSYMBOL_SAVE: case YYSYMBOL_LOAD: case YYSYMBOL_FORMAT:
	case YYSYMBOL_FORGET:
	case YYSYMBOL_HELP: case YYSYMBOL_QUIT: case YYSYMBOL_DRIFT: case YYSYMBOL_DIFFUSION:
	case YYSYMBOL_GENERATOR: case YYSYMBOL_QV: case YYSYMBOL_PDE: case YYSYMBOL_D:
	case YYSYMBOL_COEFFICIENTS: case YYSYMBOL_FORWARD: case YYSYMBOL_MOMENTS:
		return true;
	default:
		return false;
	}
}

/* "an expression, ')' or end of statement": the expected tokens, grouped. */
static void describe_expected(struct msg *m, const yypcontext_t *ctx)
{
	yysymbol_kind_t expected[YYNTOKENS];
	const char *groups[YYNTOKENS + 4];
	yysymbol_kind_t singles[YYNTOKENS];
	int count = yypcontext_expected_tokens(ctx, expected, YYNTOKENS);
	bool statement = false, expression = false, name = false, operator = false;
	bool end = false;
	int ngroups = 0, nsingles = 0;

	for (int i = 0; i < count; i++) {
		if (expected[i] == YYSYMBOL_PARAM)
			statement = true;
		if (expected[i] == YYSYMBOL_NUM)
			expression = true;
		if (expected[i] == YYSYMBOL_NAME)
			name = true;
		if (expected[i] == YYSYMBOL_STAR)
			operator = true;
	}
	for (int i = 0; i < count; i++) {
		yysymbol_kind_t kind = expected[i];

		if (statement && (is_statement_keyword(kind) || is_expression_start(kind)))
			continue;
		if (expression && is_expression_start(kind))
			continue;
		if (name && kind == YYSYMBOL_NAME)
			continue;
		if (operator && is_operator(kind))
			continue;
		if (is_statement_end(kind)) {
			end = true;
			continue;
		}
		singles[nsingles++] = kind;
	}
	if (statement)
		groups[ngroups++] = "a statement";
	else if (expression && !name)
		groups[ngroups++] = "a number"; /* moments X, K */
	else if (expression)
		groups[ngroups++] = "an expression";
	else if (name)
		groups[ngroups++] = "a name";
	if (operator)
		groups[ngroups++] = "an operator";

	int total = ngroups + nsingles + (end && !statement ? 1 : 0);
	int written = 0;

	if (total == 0)
		return;
	msg_add(m, "; expected ");
	for (int i = 0; i < ngroups + nsingles; i++) {
		if (written > 0)
			msg_add(m, written == total - 1 ? " or " : ", ");
		if (i < ngroups)
			msg_add(m, groups[i]);
		else if (singles[i - ngroups] == YYSYMBOL_PATH)
			msg_add(m, "a file name");
		else
			msg_add_token(m, singles[i - ngroups]);
		written++;
	}
	if (end && !statement) {
		if (written > 0)
			msg_add(m, " or ");
		msg_add(m, "end of statement");
	}
}

/* The keyword tokens are declared in one block, "param" first and "d" last. */
static bool is_keyword(yysymbol_kind_t kind)
{
	return kind >= YYSYMBOL_PARAM && kind <= YYSYMBOL_D;
}

static bool name_expected(const yypcontext_t *ctx)
{
	yysymbol_kind_t expected[YYNTOKENS];
	int count = yypcontext_expected_tokens(ctx, expected, YYNTOKENS);

	for (int i = 0; i < count; i++)
		if (expected[i] == YYSYMBOL_NAME)
			return true;
	return false;
}

static int yyreport_syntax_error(const yypcontext_t *ctx, yyscan_t scanner,
				 struct itox_parse_state *ps)
{
	yysymbol_kind_t kind = yypcontext_token(ctx);
	ast_loc loc = *yypcontext_location(ctx);
	struct msg m = {.len = 0};

	(void)scanner;
	m.text[0] = '\0';
	switch (kind) {
	case YYSYMBOL_DEEP:
		set_depth_error(ps, &loc);
		return 0;
	case YYSYMBOL_BADCHAR:
		msg_add(&m, "unexpected character ");
		msg_add(&m, ps->last_text);
		set_error(ps, &loc, AST_ERROR_SYNTAX, false, m.text);
		return 0;
	case YYSYMBOL_BADSTRING:
		set_error(ps, &loc, AST_ERROR_SYNTAX, false,
			  "unterminated string (a closing '\"' is missing)");
		return 0;
	case YYSYMBOL_YYEOF:
		if (ps->depth > 0) {
			const struct itox_open_bracket *open = &ps->open[ps->depth - 1];

			msg_add(&m, open->bracket == '(' ? "unclosed '('" : "unclosed '['");
			set_error(ps, &open->loc, AST_ERROR_SYNTAX, true, m.text);
			return 0;
		}
		msg_add(&m, "unexpected end of input");
		describe_expected(&m, ctx);
		set_error(ps, &loc, AST_ERROR_SYNTAX, true, m.text);
		return 0;
	default:
		msg_add(&m, "unexpected ");
		describe_lookahead(&m, kind, ps);
		if (is_keyword(kind) && name_expected(ctx))
			msg_add(&m, " (a reserved word)");
		describe_expected(&m, ctx);
		set_error(ps, &loc, AST_ERROR_SYNTAX, false, m.text);
		return 0;
	}
}
