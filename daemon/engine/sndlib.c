/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reads an SNDlib native network file into a weft model. */

/*
 * DESIGN
 * The native format is line oriented: a section opens with "NAME (" on a
 * line of its own, holds one entry per line and closes with a line holding
 * only ")".  Only ADMISSIBLE_PATHS spreads one entry over several lines, so
 * it is skipped by counting parentheses.  The parser walks the text once: a
 * line reader hands out [start, end) spans found with memchr() within len,
 * and a token cursor splits a span into words and single-character '(' and
 * ')' tokens.  Nothing is ever read past text + len, and no token is copied
 * without checking its length against a fixed buffer first.  Numbers are
 * checked character by character before strtod() sees them (num_parse()),
 * so "nan",
 * "inf" and hex floats never get in.  The model is built as the file is
 * read: nodes must come before the links and demands that name them, which
 * the section order guarantees.  Demand ids are not kept by the model, so
 * a small hash set of spans into the text finds duplicates.  Runs on the
 * caller's thread and keeps no state between calls.
 */

#include <math.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "sndlib.h"
#include "model.h"
#include "num.h"
#include "../base/err.h"
#include "../base/xalloc.h"

#define PATH_DEPTH_MAX	3	/* section ( demand ( path ( links ) ) ) */

enum section {
	SEC_META,
	SEC_NODES,
	SEC_LINKS,
	SEC_DEMANDS,
	SEC_PATHS,
	SEC_N
};

static const char *const section_names[SEC_N] = {
	[SEC_META] = "META",
	[SEC_NODES] = "NODES",
	[SEC_LINKS] = "LINKS",
	[SEC_DEMANDS] = "DEMANDS",
	[SEC_PATHS] = "ADMISSIBLE_PATHS",
};

static const struct {
	const char *name;
	double bps;
} units[] = {
	{ "BITSPERSEC", 1.0 },
	{ "KBITPERSEC", 1e3 },
	{ "MBITPERSEC", 1e6 },
	{ "GBITPERSEC", 1e9 },
};

/* A span of the input; never NUL-terminated. */
struct span {
	const char *s;
	size_t n;
};

/* Set of spans (demand ids), open addressing, power-of-two size. */
struct spanset {
	struct span *slots;	/* owned; s == NULL marks a free slot */
	size_t cap, n;
};

struct ctx {
	const char *text;	/* borrowed input */
	size_t len;
	size_t pos;		/* start of the next line */
	size_t lineno;		/* number of the current line, 1-based */
	struct span line;	/* current line, without '\n' */
	size_t lpos;		/* token cursor within line */
	double unit_bps;
	struct model *m;	/* owned until handed to the caller */
	struct spanset demand_ids;
	struct sndlib_info info;
	struct err *e;
};

/* ---- errors ---- */

static int
fail(struct ctx *c, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

static int
fail(struct ctx *c, const char *fmt, ...)
{
	char where[32], msg[ERR_MSG_MAX];
	va_list ap;

	/* Empty input has no line 0 to point at. */
	snprintf(where, sizeof(where), "line %zu",
	    c->lineno > 0 ? c->lineno : 1);
	va_start(ap, fmt);
	vsnprintf(msg, sizeof(msg), fmt, ap);
	va_end(ap);
	return err_set(c->e, ERR_INVALID, where, "%s", msg);
}

/*
 * Passes on an error from model_add_*().  A duplicate id is a fault of the
 * text being read, not a clash with stored state, so ERR_CONFLICT becomes
 * ERR_INVALID.
 */
static int
fail_model(struct ctx *c, int r, const struct err *le)
{
	char where[32];

	if (r == ERR_CONFLICT)
		r = ERR_INVALID;
	snprintf(where, sizeof(where), "line %zu", c->lineno);
	return err_set(c->e, r, where, "%s",
	    le->msg[0] != '\0' ? le->msg : err_str(r));
}

/* Printable prefix of a token for messages. */
#define SHOW(t)	(int)((t).n > 40 ? 40 : (t).n), (t).s

/* ---- lines and tokens ---- */

static bool
is_space(char ch)
{
	return ch == ' ' || ch == '\t' || ch == '\r';
}

/*
 * Advances to the next line.  Returns 1 and sets c->line, 0 at the end of
 * the input, or ERR_INVALID for a control character in the line.
 */
static int
next_line(struct ctx *c)
{
	const char *nl;
	size_t i, end;

	if (c->pos >= c->len)
		return 0;
	nl = memchr(c->text + c->pos, '\n', c->len - c->pos);
	end = nl != NULL ? (size_t)(nl - c->text) : c->len;
	c->line.s = c->text + c->pos;
	c->line.n = end - c->pos;
	c->pos = nl != NULL ? end + 1 : c->len;
	c->lineno++;
	c->lpos = 0;
	for (i = 0; i < c->line.n; i++) {
		unsigned char ch = (unsigned char)c->line.s[i];

		if ((ch < 0x20 && ch != '\t' && ch != '\r') || ch == 0x7f)
			return fail(c, "control character 0x%02x in line", ch);
	}
	return 1;
}

/* True if the line is blank or a comment. */
static bool
skippable(const struct ctx *c)
{
	size_t i = 0;

	while (i < c->line.n && is_space(c->line.s[i]))
		i++;
	if (i == c->line.n || c->line.s[i] == '#')
		return true;
	/* The banner "?SNDlib native format; ..." opens the file. */
	return c->lineno == 1 && c->line.s[0] == '?';
}

/* Returns the next token of the line in *t, false at the end of it. */
static bool
next_tok(struct ctx *c, struct span *t)
{
	const char *s = c->line.s;
	size_t n = c->line.n, i = c->lpos, start;

	while (i < n && is_space(s[i]))
		i++;
	if (i == n) {
		c->lpos = i;
		return false;
	}
	start = i;
	if (s[i] == '(' || s[i] == ')')
		i++;
	else
		while (i < n && !is_space(s[i]) && s[i] != '(' && s[i] != ')')
			i++;
	t->s = s + start;
	t->n = i - start;
	c->lpos = i;
	return true;
}

static bool
is_paren(const struct span *t)
{
	return t->n == 1 && (t->s[0] == '(' || t->s[0] == ')');
}

static bool
tok_is(const struct span *t, const char *word)
{
	return t->n == strlen(word) && memcmp(t->s, word, t->n) == 0;
}

/* True if the rest of the line is the single token ")". */
static bool
line_is_close(struct ctx *c)
{
	struct span t;
	size_t save = c->lpos;

	if (next_tok(c, &t) && tok_is(&t, ")") && !next_tok(c, &t))
		return true;
	c->lpos = save;
	return false;
}

static int
expect(struct ctx *c, const char *what, const char *paren)
{
	struct span t;

	if (!next_tok(c, &t))
		return fail(c, "expected \"%s\" %s, found end of line", paren,
		    what);
	if (!tok_is(&t, paren))
		return fail(c, "expected \"%s\" %s, found \"%.*s\"", paren,
		    what, SHOW(t));
	return 0;
}

static int
expect_end(struct ctx *c)
{
	struct span t;

	if (next_tok(c, &t))
		return fail(c, "unexpected \"%.*s\" at end of line", SHOW(t));
	return 0;
}

/* Reads a word token (an id or a number), not a parenthesis. */
static int
word(struct ctx *c, struct span *t, const char *what)
{
	if (!next_tok(c, t))
		return fail(c, "missing %s", what);
	if (is_paren(t))
		return fail(c, "expected %s, found \"%.*s\"", what, SHOW(*t));
	return 0;
}

/* Reads an id into buf (MODEL_ID_MAX + 1 bytes) as a C string. */
static int
id(struct ctx *c, char *buf, const char *what)
{
	struct span t;
	const char *why;
	int r;

	if ((r = word(c, &t, what)) != 0)
		return r;
	if (t.n > MODEL_ID_MAX)
		return fail(c, "%s is longer than %d bytes", what,
		    MODEL_ID_MAX);
	/* Ids reach JSON and URL paths: UTF-8, no '/'. */
	if ((why = model_text_problem(t.s, t.n, true)) != NULL)
		return fail(c, "%s %s: \"%.*s\"", what, why, SHOW(t));
	memcpy(buf, t.s, t.n);
	buf[t.n] = '\0';
	return 0;
}

/* Converts a token to a finite decimal number (see num_parse()). */
static int
tok_num(struct ctx *c, const struct span *t, bool is_signed, double *vp,
    const char *what)
{
	struct err le;

	err_clear(&le);
	if (num_parse(t->s, t->n, is_signed ? NUM_SIGNED : 0, what, vp,
	    &le) != 0)
		return fail(c, "%s", le.msg);
	return 0;
}

static int
num(struct ctx *c, bool is_signed, double *vp, const char *what)
{
	struct span t;
	int r;

	*vp = 0;
	if ((r = word(c, &t, what)) != 0)
		return r;
	return tok_num(c, &t, is_signed, vp, what);
}

/* ---- demand id set ---- */

static uint64_t
hash(const struct span *t)
{
	uint64_t h = 1469598103934665603ULL;	/* FNV-1a */
	size_t i;

	for (i = 0; i < t->n; i++) {
		h ^= (unsigned char)t->s[i];
		h *= 1099511628211ULL;
	}
	return h;
}

/* Adds t; returns false if it was already there. */
static bool
spanset_add(struct spanset *set, struct span t)
{
	size_t i, mask;

	if (2 * (set->n + 1) > set->cap) {
		struct spanset big;

		big.cap = set->cap == 0 ? 64 : 2 * set->cap;
		big.n = 0;
		big.slots = xcalloc(big.cap, sizeof(*big.slots));
		for (i = 0; i < set->cap; i++)
			if (set->slots[i].s != NULL)
				spanset_add(&big, set->slots[i]);
		free(set->slots);
		*set = big;
	}
	mask = set->cap - 1;
	for (i = hash(&t) & mask; set->slots[i].s != NULL; i = (i + 1) & mask)
		if (set->slots[i].n == t.n &&
		    memcmp(set->slots[i].s, t.s, t.n) == 0)
			return false;
	set->slots[i] = t;
	set->n++;
	return true;
}

/* ---- sections ---- */

static int
meta_line(struct ctx *c)
{
	const char *s = c->line.s, *eq;
	size_t n = c->line.n, i, j, k;
	struct span key, val;

	eq = memchr(s, '=', n);
	if (eq == NULL)
		return fail(c, "META: expected \"key = value\"");
	for (i = 0; i < n && is_space(s[i]); i++)
		;
	for (j = (size_t)(eq - s); j > i && is_space(s[j - 1]); j--)
		;
	key.s = s + i;
	key.n = j - i;
	if (key.n == 0)
		return fail(c, "META: empty key");
	for (i = (size_t)(eq - s) + 1; i < n && is_space(s[i]); i++)
		;
	for (j = n; j > i && is_space(s[j - 1]); j--)
		;
	val.s = s + i;
	val.n = j - i;
	if (!tok_is(&key, "unit"))
		return 0;	/* granularity, time, origin: not used */
	if (c->info.unit[0] != '\0')
		return fail(c, "META: unit given twice");
	for (k = 0; k < sizeof(units) / sizeof(units[0]); k++) {
		if (tok_is(&val, units[k].name)) {
			snprintf(c->info.unit, sizeof(c->info.unit), "%s",
			    units[k].name);
			c->unit_bps = units[k].bps;
			return 0;
		}
	}
	return fail(c, "META: unknown unit \"%.*s\"", SHOW(val));
}

static int
node_line(struct ctx *c)
{
	char nid[MODEL_ID_MAX + 1], where[32];
	struct err le = { 0 };
	struct span t;
	double x = 0, y = 0;
	bool coords = false;
	size_t idx;
	int r;

	if ((r = id(c, nid, "node id")) != 0)
		return r;
	if (next_tok(c, &t)) {
		if (!tok_is(&t, "("))
			return fail(c, "expected \"(\" before coordinates, "
			    "found \"%.*s\"", SHOW(t));
		if ((r = num(c, true, &x, "longitude")) != 0 ||
		    (r = num(c, true, &y, "latitude")) != 0 ||
		    (r = expect(c, "after coordinates", ")")) != 0 ||
		    (r = expect_end(c)) != 0)
			return r;
		coords = true;
	}
	snprintf(where, sizeof(where), "line %zu", c->lineno);
	if ((r = model_add_node(c->m, nid, NULL, &idx, where, &le)) != 0)
		return fail_model(c, r, &le);
	if (!coords)
		return 0;
	if (fabs(x) <= 180 && fabs(y) <= 90) {
		c->m->nodes[idx].lon = x;
		c->m->nodes[idx].lat = y;
		c->m->nodes[idx].has_coords = true;
	} else
		c->info.n_planar++;
	return 0;
}

/* Reads "( a b )" and checks both ends name known, distinct nodes. */
static int
ends(struct ctx *c, char *a, char *b, const char *what)
{
	int r;

	if ((r = expect(c, "before the end nodes", "(")) != 0 ||
	    (r = id(c, a, "first end node")) != 0 ||
	    (r = id(c, b, "second end node")) != 0 ||
	    (r = expect(c, "after the end nodes", ")")) != 0)
		return r;
	if (model_find_node(c->m, a) < 0)
		return fail(c, "%s: unknown node \"%s\"", what, a);
	if (model_find_node(c->m, b) < 0)
		return fail(c, "%s: unknown node \"%s\"", what, b);
	if (strcmp(a, b) == 0)
		return fail(c, "%s: both ends are node \"%s\"", what, a);
	return 0;
}

static int
link_line(struct ctx *c)
{
	char lid[MODEL_ID_MAX + 1], a[MODEL_ID_MAX + 1], b[MODEL_ID_MAX + 1];
	char where[32];
	struct err le = { 0 };
	struct span t;
	double pre, pre_cost, rcost, setup, mcap, mcost, first = 0, cap;
	size_t nmod = 0;
	int r;

	if ((r = id(c, lid, "link id")) != 0 ||
	    (r = ends(c, a, b, "link")) != 0 ||
	    (r = num(c, false, &pre, "pre-installed capacity")) != 0 ||
	    (r = num(c, false, &pre_cost, "pre-installed cost")) != 0 ||
	    (r = num(c, false, &rcost, "routing cost")) != 0 ||
	    (r = num(c, false, &setup, "setup cost")) != 0 ||
	    (r = expect(c, "before the module list", "(")) != 0)
		return r;
	for (;;) {
		if (!next_tok(c, &t))
			return fail(c, "module list not closed");
		if (tok_is(&t, ")"))
			break;
		if (tok_is(&t, "("))
			return fail(c, "unexpected \"(\" in module list");
		if ((r = tok_num(c, &t, false, &mcap,
		    "module capacity")) != 0 ||
		    (r = num(c, false, &mcost, "module cost")) != 0)
			return r;
		if (nmod++ == 0)
			first = mcap;
	}
	if ((r = expect_end(c)) != 0)
		return r;
	cap = pre > 0 ? pre : first;
	if (!(cap > 0))
		return fail(c, "link \"%s\" has no capacity: no pre-installed "
		    "capacity and no module with a positive capacity", lid);
	snprintf(where, sizeof(where), "line %zu", c->lineno);
	r = model_add_link(c->m, lid, a, b, cap * c->unit_bps,
	    rcost > 0 ? rcost : 1.0, true, where, &le);
	if (r != 0)
		return fail_model(c, r, &le);
	return 0;
}

static int
demand_line(struct ctx *c)
{
	char a[MODEL_ID_MAX + 1], b[MODEL_ID_MAX + 1], where[32];
	struct err le = { 0 };
	struct span did, t;
	double unit, value, hops;
	int r;

	if ((r = word(c, &did, "demand id")) != 0)
		return r;
	if (did.n > MODEL_ID_MAX)
		return fail(c, "demand id is longer than %d bytes",
		    MODEL_ID_MAX);
	if (!spanset_add(&c->demand_ids, did))
		return fail(c, "duplicate demand id \"%.*s\"", SHOW(did));
	if ((r = ends(c, a, b, "demand")) != 0 ||
	    (r = num(c, false, &unit, "routing unit")) != 0 ||
	    (r = num(c, false, &value, "demand value")) != 0 ||
	    (r = word(c, &t, "hop limit")) != 0)
		return r;
	if (!(unit > 0))
		return fail(c, "routing unit must be positive");
	if (!tok_is(&t, "UNLIMITED")) {
		if ((r = tok_num(c, &t, false, &hops, "hop limit")) != 0)
			return r;
		c->info.n_hop_limited++;
	}
	if ((r = expect_end(c)) != 0)
		return r;
	snprintf(where, sizeof(where), "line %zu", c->lineno);
	r = model_add_demand(c->m, a, b, value * c->unit_bps, 0, where, &le);
	if (r != 0)
		return fail_model(c, r, &le);
	return 0;
}

/* Skips ADMISSIBLE_PATHS up to its closing parenthesis. */
static int
paths_section(struct ctx *c, size_t open_line)
{
	struct span t;
	int depth = 1, r;

	while ((r = next_line(c)) == 1) {
		if (skippable(c))
			continue;
		c->info.n_path_lines++;
		while (next_tok(c, &t)) {
			if (tok_is(&t, "(")) {
				if (++depth > PATH_DEPTH_MAX)
					return fail(c, "ADMISSIBLE_PATHS: "
					    "parentheses nested too deep");
			} else if (tok_is(&t, ")")) {
				if (--depth == 0)
					return expect_end(c);
			}
		}
	}
	if (r < 0)
		return r;
	return fail(c, "end of input inside ADMISSIBLE_PATHS opened at "
	    "line %zu", open_line);
}

static int
section(struct ctx *c, enum section sec)
{
	size_t open_line = c->lineno;
	int r;

	if (sec == SEC_PATHS)
		return paths_section(c, open_line);
	while ((r = next_line(c)) == 1) {
		if (skippable(c))
			continue;
		if (line_is_close(c))
			return 0;
		switch (sec) {
		case SEC_META:
			r = meta_line(c);
			break;
		case SEC_NODES:
			r = node_line(c);
			break;
		case SEC_LINKS:
			r = link_line(c);
			break;
		case SEC_DEMANDS:
			r = demand_line(c);
			break;
		default:
			r = ERR_INTERNAL;
			break;
		}
		if (r != 0)
			return r;
	}
	if (r < 0)
		return r;
	return fail(c, "end of input inside %s opened at line %zu",
	    section_names[sec], open_line);
}

/* Reads "NAME (" and returns the section in *secp. */
static int
section_head(struct ctx *c, enum section *secp)
{
	struct span t;
	int k;

	if (!next_tok(c, &t) || is_paren(&t))
		return fail(c, "expected a section such as \"NODES (\"");
	for (k = 0; k < SEC_N; k++)
		if (tok_is(&t, section_names[k]))
			break;
	if (k == SEC_N)
		return fail(c, "unknown section \"%.*s\"", SHOW(t));
	*secp = (enum section)k;
	if (expect(c, "after the section name", "(") != 0 ||
	    expect_end(c) != 0)
		return ERR_INVALID;
	return 0;
}

int
sndlib_parse_info(const char *text, size_t len, struct model **mp,
    struct sndlib_info *info, struct err *e)
{
	struct ctx c;
	enum section sec = SEC_META;
	int last = -1, r = ERR_INTERNAL;
	bool seen[SEC_N] = { false };

	*mp = NULL;
	memset(&c, 0, sizeof(c));
	c.text = text;
	c.len = text != NULL ? len : 0;
	c.unit_bps = 1e6;	/* SNDlib's habit when META names no unit */
	c.e = e;
	c.m = model_new();

	while ((r = next_line(&c)) == 1) {
		if (skippable(&c))
			continue;
		if ((r = section_head(&c, &sec)) != 0)
			goto out;
		if ((int)sec <= last) {
			r = fail(&c, "section %s repeated or out of order "
			    "(expected META, NODES, LINKS, DEMANDS, "
			    "ADMISSIBLE_PATHS)", section_names[sec]);
			goto out;
		}
		last = (int)sec;
		seen[sec] = true;
		if ((r = section(&c, sec)) != 0)
			goto out;
	}
	if (r < 0)
		goto out;
	for (sec = SEC_NODES; sec <= SEC_DEMANDS; sec++) {
		if (!seen[sec]) {
			r = fail(&c, "missing section %s", section_names[sec]);
			goto out;
		}
	}
	c.info.unit_bps = c.unit_bps;
	if (info != NULL)
		*info = c.info;
	*mp = c.m;
	c.m = NULL;
	r = 0;
out:
	free(c.demand_ids.slots);
	model_free(c.m);
	return r;
}

int
sndlib_parse(const char *text, size_t len, struct model **mp, struct err *e)
{
	return sndlib_parse_info(text, len, mp, NULL, e);
}
