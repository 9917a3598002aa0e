/* ast.c - syntax-tree nodes, the arena that owns them, and ast_parse().
 *
 * Every node is recorded in list->all when it is made, so ast_list_free()
 * releases a whole parse, including the nodes of a statement that a syntax
 * error cut short.  Lists are grown in a "holder" node that later becomes
 * the node that owns them (ast_finish), so a half-built list is also in the
 * arena.  A node may be shared: "param a, b > 0" points both COND nodes at
 * the same bound.  Nodes are freed once each, from the arena only.
 */

#include <limits.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "ast.h"
#include "itox.h"

/* max_depth when the caller passes a value below 1, and the largest one
 * honoured: deeper trees would put recursive walkers (ast_to_sexpr, the
 * engine's own) at risk of exhausting the C stack. */
#define AST_DEFAULT_DEPTH 256
#define AST_MAX_DEPTH 10000
/* The kind of a holder node before ast_finish gives it its real kind. */
#define AST_HOLDER AST_KIND_COUNT

const char *const ast_keywords[] = {
#define KEYWORD_WORD(word, token) #word,
	ITOX_KEYWORDS(KEYWORD_WORD)
#undef KEYWORD_WORD
	NULL,
};

static const char *const kind_names[] = {
#define KIND_NAME(name) #name,
	AST_KINDS(KIND_NAME)
#undef KIND_NAME
};

/* Out of memory aborts (see STYLE.md); a local helper keeps this module
 * independent of xalloc. */
static void *checked(void *pointer)
{
	if (pointer == NULL) {
		fputs("itox: out of memory\n", stderr);
		abort();
	}
	return pointer;
}

static void *grow(void *array, size_t *capacity, size_t size)
{
	size_t cap = *capacity ? 2 * *capacity : 8;

	if (cap > SIZE_MAX / size)
		checked(NULL);
	array = checked(realloc(array, cap * size));
	*capacity = cap;
	return array;
}

static char *copy_text(const char *text, size_t length)
{
	char *copy = checked(malloc(length + 1));

	memcpy(copy, text, length);
	copy[length] = '\0';
	return copy;
}

const char *ast_kind_name(ast_kind kind)
{
	if ((unsigned)kind >= AST_KIND_COUNT)
		return "?";
	return kind_names[kind];
}

/* ------------------------------------------------------------ constructors */

ast_node *ast_new(ast_list *list, ast_kind kind, const ast_loc *loc)
{
	ast_node *node = checked(calloc(1, sizeof *node));

	if (list->nall == list->capall)
		list->all = grow(list->all, &list->capall, sizeof *list->all);
	list->all[list->nall++] = node;
	node->kind = kind;
	node->loc = *loc;
	node->op = REL_NONE;
	return node;
}

ast_node *ast_leaf(ast_list *list, ast_kind kind, const char *text, size_t length,
		   const ast_loc *loc)
{
	ast_node *node = ast_new(list, kind, loc);

	node->text = copy_text(text, length);
	return node;
}

ast_node *ast_unary(ast_list *list, ast_kind kind, ast_node *a, const ast_loc *loc)
{
	ast_node *node = ast_new(list, kind, loc);

	node->a = a;
	return node;
}

ast_node *ast_binary(ast_list *list, ast_kind kind, ast_node *a, ast_node *b,
		     const ast_loc *loc)
{
	ast_node *node = ast_new(list, kind, loc);

	node->a = a;
	node->b = b;
	return node;
}

/* A node whose text is the text of the token node name. */
ast_node *ast_named(ast_list *list, ast_kind kind, const ast_node *name, ast_node *a,
		    ast_node *b, const ast_loc *loc)
{
	ast_node *node = ast_binary(list, kind, a, b, loc);

	node->text = copy_text(name->text, strlen(name->text));
	return node;
}

ast_node *ast_holder(ast_list *list, ast_node *first, const ast_loc *loc)
{
	return ast_append(ast_new(list, AST_HOLDER, loc), first);
}

/* Arrays without a capacity field: the capacity is the smallest power of
 * two that is at least 8 and at least the count, so a count that is such a
 * power means the array is full. */
static void push(ast_node ***array, size_t *count, ast_node *item)
{
	size_t n = *count;

	if (*array == NULL) {
		*array = checked(malloc(8 * sizeof **array));
	} else if (n >= 8 && (n & (n - 1)) == 0) {
		size_t cap = n;

		*array = grow(*array, &cap, sizeof **array);
	}
	(*array)[n] = item;
	*count = n + 1;
}

ast_node *ast_append(ast_node *holder, ast_node *item)
{
	push(&holder->items, &holder->nitems, item);
	return holder;
}

/* The holder becomes the finished node: its list stays, it gets a kind, a
 * text (from name, when given), a first child and the span of the rule. */
ast_node *ast_finish(ast_node *holder, ast_kind kind, const ast_node *name, ast_node *a,
		     const ast_loc *loc)
{
	holder->kind = kind;
	if (name != NULL)
		holder->text = copy_text(name->text, strlen(name->text));
	holder->a = a;
	holder->loc = *loc;
	return holder;
}

ast_node *ast_cond(ast_list *list, const ast_node *name, ast_rel op, ast_node *bound,
		   const ast_loc *loc)
{
	ast_node *node = ast_named(list, AST_COND, name, bound, NULL, loc);

	node->op = op;
	return node;
}

static ast_rel flipped(ast_rel op)
{
	switch (op) {
	case REL_GT: return REL_LT;
	case REL_GE: return REL_LE;
	case REL_LT: return REL_GT;
	case REL_LE: return REL_GE;
	default: return op;
	}
}

static bool is_number(const ast_node *node)
{
	return node->kind == AST_NUM || (node->kind == AST_NEG && node->a->kind == AST_NUM);
}

/* "x > 0" and "0 < x" are a range on the name x (a COND, as in param);
 * anything else, "2*k*m > s^2", "T - t >= 1", is a RELATION between two
 * expressions, which the session keeps as a constraint on sampling. */
ast_node *ast_relation(ast_list *list, ast_node *lhs, ast_rel op, ast_node *rhs,
		       const ast_loc *loc)
{
	if (lhs->kind == AST_NAME)
		return ast_cond(list, lhs, op, rhs, loc);
	if (op != REL_IN && is_number(lhs) && rhs->kind == AST_NAME)
		return ast_cond(list, rhs, flipped(op), lhs, loc);
	ast_node *node = ast_binary(list, AST_RELATION, lhs, rhs, loc);

	node->op = op;
	return node;
}

/* "param a, b > 0": every name gets the relation and the (shared) bound;
 * each COND then spans from its name to the end of the bound. */
ast_node *ast_param(ast_node *holder, ast_rel op, ast_node *bound, const ast_loc *loc)
{
	for (size_t i = 0; i < holder->nitems; i++) {
		ast_node *cond = holder->items[i];

		cond->op = op;
		cond->a = bound;
		cond->loc.last_line = loc->last_line;
		cond->loc.last_column = loc->last_column;
	}
	return holder;
}

/* "check d(EXPR) at ..." means the same as "check d EXPR at ...". */
ast_node *ast_check_opts(ast_list *list, ast_node *over, ast_node *where, const ast_loc *loc)
{
	return ast_binary(list, AST_HOLDER, over, where, loc);
}

ast_node *ast_check(ast_list *list, bool with_d, ast_node *a, ast_node *b,
		    ast_node *at, ast_node *opts, bool verbose, const ast_loc *loc)
{
	ast_node *over = NULL;
	ast_node *node = ast_finish(at, AST_S_CHECK, NULL, a, loc);

	(void)list;
	if (!with_d && a->kind == AST_DIFF) {
		with_d = true;
		node->a = a->a;
	}
	node->b = b;
	node->with_d = with_d;
	node->verbose = verbose;
	if (opts != NULL) {
		node->c = opts->b;
		over = opts->a;
	}
	if (over != NULL) {
		node->extra = over->items;
		node->nextra = over->nitems;
		over->items = NULL;
		over->nitems = 0;
	}
	return node;
}

void ast_push_stmt(ast_list *list, ast_node *stmt)
{
	push(&list->stmts, &list->n, stmt);
}

/* Whether more than limit nodes with children lie on one path down from
 * root (the statement node itself not counted: "----x" has depth 4).  The
 * walk uses no recursion, so a long chain such as a+b+c+... cannot exhaust
 * the C stack; where gets the span of the first node found too deep. */
/* a + b + c is a left spine of ADD/SUB nodes (and a*b/c of MUL/DIV): the
 * engine folds such chains in a loop, so their length is not nesting. */
static bool same_chain(const ast_node *parent, const ast_node *child)
{
	bool additive = parent->kind == AST_ADD || parent->kind == AST_SUB;
	bool multiplicative = parent->kind == AST_MUL || parent->kind == AST_DIV;
	return (additive && (child->kind == AST_ADD || child->kind == AST_SUB)) ||
	       (multiplicative && (child->kind == AST_MUL || child->kind == AST_DIV));
}

bool ast_too_deep(const ast_node *root, int limit, ast_loc *where)
{
	struct frame {
		const ast_node *node;
		int depth;
	} *stack = NULL;
	size_t count = 0, capacity = 0;
	bool deep = false;

	stack = grow(stack, &capacity, sizeof *stack);
	stack[count++] = (struct frame){root, 0};
	while (count > 0 && !deep) {
		struct frame top = stack[--count];
		const ast_node *node = top.node;
		size_t more = 3 + node->nitems + node->nextra;
		bool leaf = more == 3 && node->a == NULL && node->b == NULL && node->c == NULL;

		if (top.depth > limit && !leaf) {
			*where = node->loc;
			deep = true;
			break;
		}
		while (count + more > capacity)
			stack = grow(stack, &capacity, sizeof *stack);
		const ast_node *children[3] = {node->a, node->b, node->c};
		for (int i = 0; i < 3; i++)
			if (children[i] != NULL)
				stack[count++] = (struct frame){children[i],
								top.depth + (i == 0 && same_chain(node, children[i]) ? 0 : 1)};
		for (size_t i = 0; i < node->nitems; i++)
			stack[count++] = (struct frame){node->items[i], top.depth + 1};
		for (size_t i = 0; i < node->nextra; i++)
			stack[count++] = (struct frame){node->extra[i], top.depth + 1};
	}
	free(stack);
	return deep;
}

/* ------------------------------------------------------------------ parse */

void ast_parse(const char *source, size_t length, int max_depth, ast_list *list)
{
	struct itox_parse_state state;

	memset(list, 0, sizeof *list);
	memset(&state, 0, sizeof state);
	if (source == NULL)
		length = 0;
	if (length > INT_MAX / 2) {
		list->error.present = true;
		list->error.kind = AST_ERROR_SIZE;
		list->error.loc = (ast_loc){1, 1, 1, 1};
		snprintf(list->error.message, sizeof list->error.message,
			 "input too large (%zu bytes)", length);
		return;
	}
	state.list = list;
	state.max_depth = max_depth < 1 ? AST_DEFAULT_DEPTH : max_depth;
	if (state.max_depth > AST_MAX_DEPTH)
		state.max_depth = AST_MAX_DEPTH;
	state.line = state.prev_line = 1;
	state.column = state.prev_column = 1;
	itox_scan_parse(source != NULL ? source : "", length, &state);
	free(state.open);
}

void ast_list_free(ast_list *list)
{
	if (list == NULL)
		return;
	for (size_t i = 0; i < list->nall; i++) {
		ast_node *node = list->all[i];

		free(node->text);
		free(node->items);
		free(node->extra);
		free(node);
	}
	free(list->all);
	free(list->stmts);
	memset(list, 0, sizeof *list);
}

/* ------------------------------------------------------------ S-expressions */

struct buffer {
	char *text;
	size_t length, capacity;
};

static void put(struct buffer *out, const char *text)
{
	size_t n = strlen(text);

	while (out->length + n + 1 > out->capacity)
		out->text = grow(out->text, &out->capacity, 1);
	memcpy(out->text + out->length, text, n + 1);
	out->length += n;
}

/* Texts that would not read back as one atom are written in quotes. */
static void put_text(struct buffer *out, const char *text)
{
	bool plain = text[0] != '\0' && strpbrk(text, " \t()\"\\") == NULL;

	if (plain) {
		put(out, text);
		return;
	}
	put(out, "\"");
	for (const char *p = text; *p != '\0'; p++) {
		char one[3] = {'\\', *p, '\0'};

		put(out, (*p == '"' || *p == '\\') ? one : one + 1);
	}
	put(out, "\"");
}

static const char *rel_name(ast_rel op)
{
	switch (op) {
	case REL_GT: return ">";
	case REL_GE: return ">=";
	case REL_LT: return "<";
	case REL_LE: return "<=";
	case REL_IN: return "in";
	case REL_NONE: break;
	}
	return "";
}

static void put_node(struct buffer *out, const ast_node *node);

static void put_list(struct buffer *out, ast_node *const *items, size_t n)
{
	for (size_t i = 0; i < n; i++) {
		put(out, " ");
		put_node(out, items[i]);
	}
}

/* (KIND [text] [relation] [flag d] children... items...); S_CHECK writes
 * (S_CHECK [d] a [b] (at ...) [(over ...)] [(where CONCRETE...)] [verbose]),
 * a CONCRETE (CONCRETE name body args...), and S_PDE writes
 * (S_PDE V args... [(discount a)]). */
static void put_node(struct buffer *out, const ast_node *node)
{
	if (node == NULL) {
		put(out, "nil");
		return;
	}
	put(out, "(");
	put(out, ast_kind_name(node->kind));
	if (node->text != NULL) {
		put(out, " ");
		put_text(out, node->text);
	}
	if ((node->kind == AST_COND || node->kind == AST_RELATION) && node->op != REL_NONE) {
		put(out, " ");
		put(out, rel_name(node->op));
	}
	if (node->kind == AST_S_CHECK && node->with_d)
		put(out, " d");
	if (node->kind == AST_S_PDE) {
		put_list(out, node->items, node->nitems);
		if (node->a != NULL) {
			put(out, " (discount ");
			put_node(out, node->a);
			put(out, ")");
		}
		put(out, ")");
		return;
	}
	const ast_node *children[3] = {node->a, node->b, node->kind == AST_S_CHECK ? NULL : node->c};
	for (int i = 0; i < 3; i++) {
		if (children[i] != NULL) {
			put(out, " ");
			put_node(out, children[i]);
		}
	}
	if (node->kind == AST_S_CHECK) {
		put(out, " (at");
		put_list(out, node->items, node->nitems);
		put(out, ")");
		if (node->nextra > 0) {
			put(out, " (over");
			put_list(out, node->extra, node->nextra);
			put(out, ")");
		}
		if (node->c != NULL) {
			put(out, " (where");
			put_list(out, node->c->items, node->c->nitems);
			put(out, ")");
		}
		if (node->verbose)
			put(out, " verbose");
	} else {
		put_list(out, node->items, node->nitems);
	}
	put(out, ")");
}

/* The caller frees the result with free(). */
char *ast_to_sexpr(const ast_node *node)
{
	struct buffer out = {NULL, 0, 0};

	put(&out, "");
	put_node(&out, node);
	return out.text;
}
