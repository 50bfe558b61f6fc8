/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reads and writes a network as one CSV text that a spreadsheet can hold. */

/*
 * DESIGN
 * Reading makes three passes over the text with the same row reader:
 * nodes, then links, then demands, so that a spreadsheet may sort its rows
 * any way it likes.  The first pass also checks every row's kind, so a
 * misspelt kind is reported before anything that depends on it.  The row
 * reader follows RFC 4180 (quoted fields, doubled quotes) and copies each
 * field into a fixed buffer of its own after checking the length, so no
 * field is ever read past len or copied without a bound; a row has at most
 * ROW_FIELDS fields that carry data, and any further fields must be empty
 * (spreadsheets pad short rows with commas).  Values may not hold control
 * characters, so a line break inside quotes is refused rather than kept.
 * Numbers are checked character by character before strtod() sees them
 * (num_parse()): no NaN, no infinity, no hex.  Writing prints each number
 * in its shortest form that reads back to the same double.  Runs on the
 * caller's thread.
 */

#include <math.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "csvnet.h"
#include "model.h"
#include "num.h"
#include "../base/err.h"
#include "../base/xalloc.h"

#define ROW_FIELDS	8	/* fields a row may fill */
#define FIELD_MAX	512	/* longest field, bytes (> names and ids) */

enum kind {
	KIND_NODE,
	KIND_LINK,
	KIND_DEMAND,
	KIND_N
};

static const struct {
	const char *word;
	int nfields;		/* fields the kind uses, the kind included */
} kinds[KIND_N] = {
	[KIND_NODE] = { "node", 5 },
	[KIND_LINK] = { "link", 7 },
	[KIND_DEMAND] = { "demand", 5 },
};

struct field {
	char s[FIELD_MAX + 1];	/* NUL-terminated copy */
	size_t n;
};

struct row {
	struct field f[ROW_FIELDS];
	struct field spill;	/* scratch for fields past ROW_FIELDS */
	size_t nf;		/* fields read, up to the last non-empty one */
	size_t extra;		/* 1-based number of a non-empty field past
				   ROW_FIELDS, 0 if none */
	size_t lineno;		/* line the row starts on */
	enum kind kind;
};

struct ctx {
	const char *text;	/* borrowed input */
	size_t len;
	size_t pos;
	size_t lineno;		/* line at pos, 1-based */
	struct row *row;	/* owned scratch row */
	struct model *m;	/* owned until handed to the caller */
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

	snprintf(where, sizeof(where), "line %zu", c->row->lineno);
	va_start(ap, fmt);
	vsnprintf(msg, sizeof(msg), fmt, ap);
	va_end(ap);
	return err_set(c->e, ERR_INVALID, where, "%s", msg);
}

/* Passes on a model_add_*() error; a duplicate within the text is input
   the caller got wrong, not a clash with stored state. */
static int
fail_model(struct ctx *c, int r, const struct err *le)
{
	char where[32];

	if (r == ERR_CONFLICT)
		r = ERR_INVALID;
	snprintf(where, sizeof(where), "line %zu", c->row->lineno);
	return err_set(c->e, r, where, "%s",
	    le->msg[0] != '\0' ? le->msg : err_str(r));
}

/* At most 40 bytes of a field, for messages. */
#define SHOW(fl)	(int)((fl)->n > 40 ? 40 : (fl)->n), (fl)->s

/* ---- the row reader ---- */

static bool
is_blank(char ch)
{
	return ch == ' ' || ch == '\t';
}

static bool
is_control(unsigned char ch)
{
	return (ch < 0x20 && ch != '\t') || ch == 0x7f;
}

/* Stores byte ch in field fl (index k), or fails if it is too long. */
static int
put(struct ctx *c, struct field *fl, size_t k, char ch)
{
	if (fl->n == FIELD_MAX)
		return fail(c, "field %zu is longer than %d bytes", k + 1,
		    FIELD_MAX);
	fl->s[fl->n++] = ch;
	return 0;
}

/* True at the end of the row: '\n', "\r\n" or the end of the text. */
static bool
at_row_end(const struct ctx *c)
{
	if (c->pos >= c->len || c->text[c->pos] == '\n')
		return true;
	return c->text[c->pos] == '\r' && c->pos + 1 < c->len &&
	    c->text[c->pos + 1] == '\n';
}

/* Consumes the row end found by at_row_end(). */
static void
eat_row_end(struct ctx *c)
{
	if (c->pos < c->len && c->text[c->pos] == '\r')
		c->pos++;
	if (c->pos < c->len && c->text[c->pos] == '\n') {
		c->pos++;
		c->lineno++;
	}
}

/* Reads one quoted field; pos is just past the opening quote. */
static int
quoted(struct ctx *c, struct field *fl, size_t k)
{
	int r;

	for (;;) {
		char ch;

		if (c->pos >= c->len)
			return fail(c, "field %zu: quote not closed", k + 1);
		ch = c->text[c->pos++];
		if (ch == '"') {
			if (c->pos < c->len && c->text[c->pos] == '"') {
				c->pos++;
				if ((r = put(c, fl, k, '"')) != 0)
					return r;
				continue;
			}
			break;
		}
		if (is_control((unsigned char)ch))
			return fail(c, "field %zu: line break or control "
			    "character inside quotes", k + 1);
		if ((r = put(c, fl, k, ch)) != 0)
			return r;
	}
	while (c->pos < c->len && is_blank(c->text[c->pos]))
		c->pos++;
	if (!at_row_end(c) && c->text[c->pos] != ',')
		return fail(c, "field %zu: unexpected text after the closing "
		    "quote", k + 1);
	return 0;
}

/* Reads one unquoted field up to ',' or the row end, trimming blanks. */
static int
unquoted(struct ctx *c, struct field *fl, size_t k)
{
	int r;

	while (!at_row_end(c) && c->text[c->pos] != ',') {
		char ch = c->text[c->pos++];

		if (ch == '"')
			return fail(c, "field %zu: a quote inside an "
			    "unquoted field", k + 1);
		if (is_control((unsigned char)ch))
			return fail(c, "field %zu: control character 0x%02x",
			    k + 1, (unsigned char)ch);
		if ((r = put(c, fl, k, ch)) != 0)
			return r;
	}
	while (fl->n > 0 && is_blank(fl->s[fl->n - 1]))
			fl->n--;
	return 0;
}

/* Skips blank lines and '#' comment lines; true if a row follows. */
static bool
skip_lines(struct ctx *c)
{
	size_t i;

	while (c->pos < c->len) {
		for (i = c->pos; i < c->len && is_blank(c->text[i]); i++)
			;
		if (i < c->len && c->text[i] == '#') {
			const char *nl = memchr(c->text + i, '\n',
			    c->len - i);

			c->pos = nl != NULL ? (size_t)(nl - c->text) : c->len;
			eat_row_end(c);
			continue;
		}
		c->pos = i;
		if (i < c->len && at_row_end(c)) {
			eat_row_end(c);
			continue;
		}
		return i < c->len;
	}
	return false;
}

/*
 * Reads the next row into c->row.  Returns 1 for a row, 0 at the end of
 * the text, or ERR_INVALID.  Rows whose fields are all empty are skipped.
 */
static int
next_row(struct ctx *c)
{
	struct row *w = c->row;
	size_t k;
	int r;

	for (;;) {
		if (!skip_lines(c))
			return 0;
		w->lineno = c->lineno;
		w->nf = 0;
		w->extra = 0;
		for (k = 0;; k++) {
			/* Fields past ROW_FIELDS land in spill, only to see
			   whether they are empty. */
			struct field *fl = k < ROW_FIELDS ? &w->f[k] :
			    &w->spill;

			fl->n = 0;
			while (c->pos < c->len && is_blank(c->text[c->pos]))
				c->pos++;
			if (c->pos < c->len && c->text[c->pos] == '"') {
				c->pos++;
				r = quoted(c, fl, k);
			} else
				r = unquoted(c, fl, k);
			if (r != 0)
				return r;
			fl->s[fl->n] = '\0';
			if (fl->n > 0) {
				if (k < ROW_FIELDS)
					w->nf = k + 1;
				else if (w->extra == 0)
					w->extra = k + 1;
			}
			if (at_row_end(c))
				break;
			c->pos++;	/* the ',' */
		}
		eat_row_end(c);
		if (w->nf > 0 || w->extra > 0)
			return 1;
	}
}

/* ---- values ---- */

/* Converts field fl to a finite number, with an SI suffix if si_ok. */
static int
number(struct ctx *c, const struct field *fl, bool is_signed, bool si_ok,
    double *vp, const char *what)
{
	struct err le;

	err_clear(&le);
	if (num_parse(fl->s, fl->n, (is_signed ? NUM_SIGNED : 0) |
	    (si_ok ? NUM_SI : 0), what, vp, &le) != 0)
		return fail(c, "%s", le.msg);
	return 0;
}

/* Field k of the current row, or an empty one past the last field. */
static const struct field *
fld(const struct ctx *c, size_t k)
{
	static const struct field empty;

	return k < c->row->nf ? &c->row->f[k] : &empty;
}

static int
need(struct ctx *c, size_t k, const char *what)
{
	if (fld(c, k)->n == 0)
		return fail(c, "missing %s (field %zu)", what, k + 1);
	return 0;
}

/* Checks that a node named by field k exists. */
static int
known_node(struct ctx *c, size_t k, const char *what)
{
	int r;

	if ((r = need(c, k, what)) != 0)
		return r;
	if (fld(c, k)->n > MODEL_ID_MAX)
		return fail(c, "%s is longer than %d bytes", what,
		    MODEL_ID_MAX);
	if (model_find_node(c->m, fld(c, k)->s) < 0)
		return fail(c, "%s: unknown node \"%.*s\"", what,
		    SHOW(fld(c, k)));
	return 0;
}

/* Checks a new node's or link's id: given, not too long, fit for JSON. */
static int
check_id(struct ctx *c, size_t k, const char *what)
{
	const char *why;
	int r;

	if ((r = need(c, k, what)) != 0)
		return r;
	if (fld(c, k)->n > MODEL_ID_MAX)
		return fail(c, "%s is longer than %d bytes", what,
		    MODEL_ID_MAX);
	if ((why = model_text_problem(fld(c, k)->s, fld(c, k)->n,
	    true)) != NULL)
		return fail(c, "%s %s: \"%.*s\"", what, why,
		    SHOW(fld(c, k)));
	return 0;
}

/* ---- rows ---- */

static int
node_row(struct ctx *c)
{
	char where[32];
	struct err le = { 0 };
	const struct field *name = fld(c, 2), *lat = fld(c, 3);
	const struct field *lon = fld(c, 4);
	const char *why;
	double vlat = 0, vlon = 0;
	size_t idx;
	int r;

	if ((r = check_id(c, 1, "node id")) != 0)
		return r;
	if (name->n > CSVNET_NAME_MAX)
		return fail(c, "node name is longer than %d bytes",
		    CSVNET_NAME_MAX);
	if ((why = model_text_problem(name->s, name->n, false)) != NULL)
		return fail(c, "node name %s", why);
	if ((lat->n == 0) != (lon->n == 0))
		return fail(c, "give both lat and lon, or neither");
	if (lat->n > 0) {
		if ((r = number(c, lat, true, false, &vlat, "lat")) != 0 ||
		    (r = number(c, lon, true, false, &vlon, "lon")) != 0)
			return r;
		if (fabs(vlat) > 90)
			return fail(c, "lat must be in [-90, 90]");
		if (fabs(vlon) > 180)
			return fail(c, "lon must be in [-180, 180]");
	}
	snprintf(where, sizeof(where), "line %zu", c->row->lineno);
	r = model_add_node(c->m, fld(c, 1)->s, name->n > 0 ? name->s : NULL,
	    &idx, where, &le);
	if (r != 0)
		return fail_model(c, r, &le);
	if (lat->n > 0) {
		c->m->nodes[idx].lat = vlat;
		c->m->nodes[idx].lon = vlon;
		c->m->nodes[idx].has_coords = true;
	}
	return 0;
}

static int
link_row(struct ctx *c)
{
	char where[32];
	struct err le = { 0 };
	const struct field *state = fld(c, 6);
	double cap, metric = 1;
	bool up = true;
	int r;

	if ((r = check_id(c, 1, "link id")) != 0 ||
	    (r = known_node(c, 2, "end a")) != 0 ||
	    (r = known_node(c, 3, "end b")) != 0 ||
	    (r = need(c, 4, "capacity")) != 0 ||
	    (r = number(c, fld(c, 4), false, true, &cap, "capacity")) != 0)
		return r;
	if (strcmp(fld(c, 2)->s, fld(c, 3)->s) == 0)
		return fail(c, "link: both ends are node \"%.*s\"",
		    SHOW(fld(c, 2)));
	if (!(cap > 0))
		return fail(c, "capacity must be positive");
	if (fld(c, 5)->n > 0) {
		if ((r = number(c, fld(c, 5), false, false, &metric,
		    "te_metric")) != 0)
			return r;
		if (!(metric > 0))
			return fail(c, "te_metric must be positive");
	}
	if (state->n == 0 || strcasecmp(state->s, "up") == 0)
		up = true;
	else if (strcasecmp(state->s, "down") == 0)
		up = false;
	else
		return fail(c, "state must be \"up\" or \"down\", not \"%.*s\"",
		    SHOW(state));
	snprintf(where, sizeof(where), "line %zu", c->row->lineno);
	r = model_add_link(c->m, fld(c, 1)->s, fld(c, 2)->s, fld(c, 3)->s,
	    cap, metric, up, where, &le);
	if (r != 0)
		return fail_model(c, r, &le);
	return 0;
}

static int
demand_row(struct ctx *c)
{
	char where[32];
	struct err le = { 0 };
	const struct field *prio = fld(c, 4);
	double rate, p = 0;
	int r;

	if ((r = known_node(c, 1, "src")) != 0 ||
	    (r = known_node(c, 2, "dst")) != 0 ||
	    (r = need(c, 3, "rate")) != 0 ||
	    (r = number(c, fld(c, 3), false, true, &rate, "rate")) != 0)
		return r;
	if (strcmp(fld(c, 1)->s, fld(c, 2)->s) == 0)
		return fail(c, "demand: both ends are node \"%.*s\"",
		    SHOW(fld(c, 1)));
	if (prio->n > 0) {
		if ((r = number(c, prio, false, false, &p, "priority")) != 0)
			return r;
		if (p != floor(p) || p > MODEL_PRIO_MAX)
			return fail(c, "priority must be a whole number "
			    "0..%d", MODEL_PRIO_MAX);
	}
	snprintf(where, sizeof(where), "line %zu", c->row->lineno);
	r = model_add_demand(c->m, fld(c, 1)->s, fld(c, 2)->s, rate, (int)p,
	    where, &le);
	if (r != 0)
		return fail_model(c, r, &le);
	return 0;
}

/* Reads the kind of the current row and checks its field count. */
static int
row_kind(struct ctx *c)
{
	const struct field *f0 = fld(c, 0);
	size_t k;

	for (k = 0; k < KIND_N; k++)
		if (strcasecmp(f0->s, kinds[k].word) == 0)
			break;
	if (k == KIND_N || f0->n == 0)
		return fail(c, "unknown kind of row \"%.*s\" (node, link or "
		    "demand)", SHOW(f0));
	c->row->kind = (enum kind)k;
	if (c->row->extra > 0 || c->row->nf > (size_t)kinds[k].nfields)
		return fail(c, "a %s row has %d fields; field %zu is not "
		    "empty", kinds[k].word, kinds[k].nfields,
		    c->row->extra > 0 ? c->row->extra : c->row->nf);
	return 0;
}

int
csvnet_parse(const char *text, size_t len, struct model **mp,
    struct err *e)
{
	struct ctx c;
	int pass, r = ERR_INTERNAL;

	*mp = NULL;
	memset(&c, 0, sizeof(c));
	c.text = text;
	c.len = text != NULL ? len : 0;
	c.e = e;
	c.row = xcalloc(1, sizeof(*c.row));
	c.m = model_new();

	for (pass = 0; pass < KIND_N; pass++) {
		c.pos = 0;
		c.lineno = 1;
		/* The byte order mark some spreadsheets write first. */
		if (c.len >= 3 && memcmp(c.text, "\xef\xbb\xbf", 3) == 0)
			c.pos = 3;
		while ((r = next_row(&c)) == 1) {
			if ((r = row_kind(&c)) != 0)
				goto out;
			if ((int)c.row->kind != pass)
				continue;
			switch (c.row->kind) {
			case KIND_NODE:
				r = node_row(&c);
				break;
			case KIND_LINK:
				r = link_row(&c);
				break;
			case KIND_DEMAND:
				r = demand_row(&c);
				break;
			default:
				r = ERR_INTERNAL;
				break;
			}
			if (r != 0)
				goto out;
		}
		if (r < 0)
			goto out;
	}
	/* An empty body must not pass for an empty network by mistake. */
	if (c.m->n_nodes == 0) {
		r = err_set(e, ERR_INVALID, "line 1", "no node rows");
		goto out;
	}
	*mp = c.m;
	c.m = NULL;
	r = 0;
out:
	model_free(c.m);
	free(c.row);
	return r;
}

/* ---- writing ---- */

/* Shortest "%.*g" form of v that strtod() reads back as v. */
static void
shortest(char *buf, size_t n, double v)
{
	int prec;

	for (prec = 1; prec < 17; prec++) {
		snprintf(buf, n, "%.*g", prec, v);
		if (strtod(buf, NULL) == v)
			return;
	}
	snprintf(buf, n, "%.17g", v);
}

/*
 * A rate with the largest SI suffix that reads back exactly: the parser
 * computes strtod(digits) * scale, so check that very product.
 */
static void
rate_str(char *buf, size_t n, double v)
{
	static const struct {
		char suffix;
		double scale;
	} out[] = { { 'T', 1e12 }, { 'G', 1e9 }, { 'M', 1e6 }, { 'k', 1e3 } };
	char num[40];
	size_t k;

	for (k = 0; k < sizeof(out) / sizeof(out[0]); k++) {
		if (v < out[k].scale)
			continue;
		shortest(num, sizeof(num), v / out[k].scale);
		if (strlen(num) <= 12 && strchr(num, 'e') == NULL &&
		    strtod(num, NULL) * out[k].scale == v) {
			snprintf(buf, n, "%s%c", num, out[k].suffix);
			return;
		}
	}
	shortest(buf, n, v);
}

/* Writes s as one field, quoted when it holds ',', '"', blanks at its
   ends or a leading '#'. */
static void
put_field(FILE *f, const char *s)
{
	size_t n = strlen(s);

	if (n > 0 && (strpbrk(s, ",\"\r\n") != NULL || s[0] == '#' ||
	    is_blank(s[0]) || is_blank(s[n - 1]))) {
		fputc('"', f);
		for (; *s != '\0'; s++) {
			if (*s == '"')
				fputc('"', f);
			fputc(*s, f);
		}
		fputc('"', f);
	} else
		fputs(s, f);
}

int
csvnet_write(const struct model *m, FILE *f)
{
	char a[40], b[40];
	size_t i;

	fputs("# weft network, CSV (see docs/csv-format.md)\n", f);
	fputs("# kind,id,name,lat,lon\n", f);
	for (i = 0; i < m->n_nodes; i++) {
		const struct node *nd = &m->nodes[i];

		fputs("node,", f);
		put_field(f, nd->id);
		fputc(',', f);
		put_field(f, nd->name != NULL ? nd->name : "");
		if (nd->has_coords) {
			shortest(a, sizeof(a), nd->lat);
			shortest(b, sizeof(b), nd->lon);
			fprintf(f, ",%s,%s\n", a, b);
		} else
			fputs(",,\n", f);
	}
	fputs("# kind,id,a,b,capacity,te_metric,state\n", f);
	for (i = 0; i < m->n_links; i++) {
		const struct link *l = &m->links[i];

		fputs("link,", f);
		put_field(f, l->id);
		fputc(',', f);
		put_field(f, m->nodes[l->a].id);
		fputc(',', f);
		put_field(f, m->nodes[l->b].id);
		rate_str(a, sizeof(a), l->capacity_bps);
		shortest(b, sizeof(b), l->te_metric);
		fprintf(f, ",%s,%s,%s\n", a, b, l->up ? "up" : "down");
	}
	fputs("# kind,src,dst,rate,priority\n", f);
	for (i = 0; i < m->n_demands; i++) {
		const struct demand *d = &m->demands[i];

		fputs("demand,", f);
		put_field(f, m->nodes[d->src].id);
		fputc(',', f);
		put_field(f, m->nodes[d->dst].id);
		rate_str(a, sizeof(a), d->rate_bps);
		fprintf(f, ",%s,%d\n", a, d->priority);
	}
	if (fflush(f) != 0 || ferror(f))
		return ERR_IO;
	return 0;
}
