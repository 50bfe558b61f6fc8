/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Building, copying and querying the network model and traffic matrices. */

/*
 * DESIGN
 * A model is plain arrays grown by doubling.  Ids are looked up through
 * struct model_index: two open-addressing hash tables (FNV-1a, linear
 * probing, load at most 1/2) that map a node or link id to its index.  The
 * index is kept current by model_add_node() and model_add_link(); code that
 * fills the arrays directly (storage, tests) leaves it stale, which
 * n_nodes/n_links in the index reveal.  model_find_*() take a const model,
 * so they never build the index (two threads may read one model): with a
 * stale index they scan the array.  Functions that take a non-const model
 * rebuild a stale index before use.
 */

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "model.h"
#include "../base/err.h"
#include "../base/xalloc.h"

struct idtable {
	size_t *slots;		/* owned: index + 1, 0 for an empty slot */
	size_t cap;		/* power of two, or 0 */
	size_t n;		/* entries inserted */
};

struct model_index {
	struct idtable nodes;
	struct idtable links;
};

/* ---- id hash tables ---- */

static uint64_t
hash_id(const char *s)
{
	uint64_t h = 1469598103934665603ULL;

	for (; *s != '\0'; s++) {
		h ^= (unsigned char)*s;
		h *= 1099511628211ULL;
	}
	return h;
}

/*
 * Finds id in t, whose entries name strings through ids (ids(base, i)).
 * Returns the slot holding it, or the empty slot where it would go.
 */
static size_t
slot_of(const struct idtable *t, const char *id,
    const char *(*name)(const void *, size_t), const void *base)
{
	size_t mask = t->cap - 1, i;

	for (i = (size_t)hash_id(id) & mask; t->slots[i] != 0;
	    i = (i + 1) & mask)
		if (strcmp(name(base, t->slots[i] - 1), id) == 0)
			break;
	return i;
}

static const char *
node_name(const void *base, size_t i)
{
	return ((const struct node *)base)[i].id;
}

static const char *
link_name(const void *base, size_t i)
{
	return ((const struct link *)base)[i].id;
}

/* Rebuilds t from scratch for n entries, room for at least want. */
static void
table_build(struct idtable *t, size_t n, size_t want,
    const char *(*name)(const void *, size_t), const void *base)
{
	size_t cap = 16, i;

	while (cap < 2 * want)
		cap *= 2;
	free(t->slots);
	t->slots = xcalloc(cap, sizeof(*t->slots));
	t->cap = cap;
	t->n = 0;
	for (i = 0; i < n; i++) {
		size_t s = slot_of(t, name(base, i), name, base);

		/* A duplicate put in by hand keeps its first index. */
		if (t->slots[s] == 0) {
			t->slots[s] = i + 1;
		}
		t->n++;
	}
}

/*
 * Makes t current for n entries with one more to come.  Returns the slot
 * for id: occupied when id is already present.
 */
static size_t
table_ready(struct idtable *t, size_t n, const char *id,
    const char *(*name)(const void *, size_t), const void *base)
{
	if (t->slots == NULL || t->n != n || 2 * (n + 1) > t->cap)
		table_build(t, n, n + 1, name, base);
	return slot_of(t, id, name, base);
}

static struct model_index *
index_get(struct model *m)
{
	if (m->index == NULL)
		m->index = xcalloc(1, sizeof(*m->index));
	return m->index;
}

static void
index_free(struct model_index *ix)
{
	if (ix == NULL)
		return;
	free(ix->nodes.slots);
	free(ix->links.slots);
	free(ix);
}

/* ---- checks shared by the add functions ---- */

/*
 * Records ERR_INVALID in e with where "<where>.<field>" (or just field when
 * where is empty) and the formatted message; returns ERR_INVALID.
 */
static int __attribute__((format(printf, 4, 5)))
bad(struct err *e, const char *where, const char *field, const char *fmt,
    ...)
{
	char w[ERR_WHERE_MAX], msg[ERR_MSG_MAX];
	va_list ap;

	if (where == NULL || where[0] == '\0')
		snprintf(w, sizeof(w), "%s", field);
	else
		snprintf(w, sizeof(w), "%s.%s", where, field);
	va_start(ap, fmt);
	vsnprintf(msg, sizeof(msg), fmt, ap);
	va_end(ap);
	return err_set(e, ERR_INVALID, w, "%s", msg);
}

/* Checks an id: 1..MODEL_ID_MAX bytes, no control characters. */
static int
check_id(const char *id, const char *where, const char *field,
    struct err *e)
{
	const unsigned char *p;

	if (id == NULL || id[0] == '\0')
		return bad(e, where, field, "empty id");
	if (strlen(id) > MODEL_ID_MAX)
		return bad(e, where, field, "id longer than %d bytes",
		    MODEL_ID_MAX);
	for (p = (const unsigned char *)id; *p != '\0'; p++)
		if (*p < 0x20 || *p == 0x7f)
			return bad(e, where, field,
			    "id holds a control character");
	return 0;
}

static int
check_rate(double rate, const char *where, const char *field,
    struct err *e)
{
	if (!isfinite(rate) || rate < 0 || rate > MODEL_RATE_MAX)
		return bad(e, where, field,
		    "rate must be a finite number in [0, %g] bit/s",
		    MODEL_RATE_MAX);
	return 0;
}

static int
check_prio(int prio, const char *where, struct err *e)
{
	if (prio < 0 || prio > MODEL_PRIO_MAX)
		return bad(e, where, "priority", "priority must be in 0..%d",
		    MODEL_PRIO_MAX);
	return 0;
}

/* Resolves a node id for a demand or link end: its index or -1 in *idxp. */
static int
resolve(struct model *m, const char *id, const char *where,
    const char *field, size_t *idxp, struct err *e)
{
	struct model_index *ix = index_get(m);
	size_t s;
	int r;

	if ((r = check_id(id, where, field, e)) != 0)
		return r;
	s = table_ready(&ix->nodes, m->n_nodes, id, node_name, m->nodes);
	if (ix->nodes.slots[s] == 0)
		return bad(e, where, field, "unknown node \"%s\"", id);
	*idxp = ix->nodes.slots[s] - 1;
	return 0;
}

/* ---- model ---- */

void
policy_default(struct policy *p)
{
	p->objective = OBJ_COST;
	p->headroom = 1.0;
	p->matrix = NULL;
	p->balance_tol = 1e-7;
	p->formulation = FORM_PATH;
	p->gap_target = 1e-7;
	p->keep_paths = false;
	p->keep_paths_tol = 1e-3;
}

static const char *const objective_words[] = {
	[OBJ_COST] = "cost",
	[OBJ_BALANCE] = "balance",
	[OBJ_CONGESTION] = "congestion",
};

static const char *const formulation_words[] = {
	[FORM_ARC] = "arc",
	[FORM_PATH] = "path",
	[FORM_POT] = "potential",
};

/* Index of word in a table of n words, or -1. */
static int
word_index(const char *const *words, size_t n, const char *word)
{
	size_t i;

	for (i = 0; word != NULL && i < n; i++)
		if (words[i] != NULL && strcmp(words[i], word) == 0)
			return (int)i;
	return -1;
}

const char *
objective_word(enum objective o)
{
	if ((size_t)o >= sizeof(objective_words) / sizeof(objective_words[0]))
		return NULL;
	return objective_words[o];
}

int
objective_parse(const char *word, enum objective *op)
{
	int i = word_index(objective_words, sizeof(objective_words) /
	    sizeof(objective_words[0]), word);

	if (i < 0)
		return ERR_INVALID;
	*op = (enum objective)i;
	return 0;
}

const char *
formulation_word(enum formulation f)
{
	if ((size_t)f >= sizeof(formulation_words) /
	    sizeof(formulation_words[0]))
		return NULL;
	return formulation_words[f];
}

int
formulation_parse(const char *word, enum formulation *fp)
{
	int i = word_index(formulation_words, sizeof(formulation_words) /
	    sizeof(formulation_words[0]), word);

	if (i < 0)
		return ERR_INVALID;
	*fp = (enum formulation)i;
	return 0;
}

void
policy_clear(struct policy *p)
{
	if (p == NULL)
		return;
	free(p->matrix);
	p->matrix = NULL;
}

struct model *
model_new(void)
{
	struct model *m = xcalloc(1, sizeof(*m));

	policy_default(&m->policy);
	return m;
}

void
model_free(struct model *m)
{
	size_t i;

	if (m == NULL)
		return;
	for (i = 0; i < m->n_nodes; i++) {
		free(m->nodes[i].id);
		free(m->nodes[i].name);
	}
	free(m->nodes);
	for (i = 0; i < m->n_links; i++) {
		free(m->links[i].id);
		free(m->links[i].srlgs);
	}
	free(m->links);
	free(m->demands);
	policy_clear(&m->policy);
	index_free(m->index);
	free(m);
}

struct model *
model_copy(const struct model *m)
{
	struct model *c = model_new();
	struct model_index *ix;
	size_t i;

	c->nodes = xcalloc(m->n_nodes, sizeof(*c->nodes));
	c->n_nodes = c->cap_nodes = m->n_nodes;
	for (i = 0; i < m->n_nodes; i++) {
		c->nodes[i] = m->nodes[i];
		c->nodes[i].id = xstrdup(m->nodes[i].id);
		c->nodes[i].name = m->nodes[i].name != NULL ?
		    xstrdup(m->nodes[i].name) : NULL;
	}
	c->links = xcalloc(m->n_links, sizeof(*c->links));
	c->n_links = c->cap_links = m->n_links;
	for (i = 0; i < m->n_links; i++) {
		c->links[i] = m->links[i];
		c->links[i].id = xstrdup(m->links[i].id);
		c->links[i].srlgs = NULL;
		if (m->links[i].n_srlgs > 0) {
			c->links[i].srlgs = xcalloc(m->links[i].n_srlgs,
			    sizeof(*c->links[i].srlgs));
			memcpy(c->links[i].srlgs, m->links[i].srlgs,
			    m->links[i].n_srlgs * sizeof(*c->links[i].srlgs));
		}
	}
	c->demands = xcalloc(m->n_demands, sizeof(*c->demands));
	c->n_demands = c->cap_demands = m->n_demands;
	if (m->n_demands > 0)
		memcpy(c->demands, m->demands,
		    m->n_demands * sizeof(*c->demands));
	c->n_unplaced = m->n_unplaced;
	c->unplaced_bps = m->unplaced_bps;
	c->policy = m->policy;
	c->policy.matrix = m->policy.matrix != NULL ?
	    xstrdup(m->policy.matrix) : NULL;
	c->revision = m->revision;
	/* The copy is not const: give it a current index now. */
	ix = index_get(c);
	table_build(&ix->nodes, c->n_nodes, c->n_nodes, node_name, c->nodes);
	table_build(&ix->links, c->n_links, c->n_links, link_name, c->links);
	return c;
}

int
model_add_node(struct model *m, const char *id, const char *name,
    size_t *idxp, const char *where, struct err *e)
{
	struct model_index *ix;
	struct node *nd;
	size_t s;
	int r;

	if ((r = check_id(id, where, "id", e)) != 0)
		return r;
	ix = index_get(m);
	s = table_ready(&ix->nodes, m->n_nodes, id, node_name, m->nodes);
	if (ix->nodes.slots[s] != 0)
		return bad(e, where, "id", "duplicate node id \"%s\"", id);
	if (m->n_nodes == m->cap_nodes) {
		m->cap_nodes = m->cap_nodes == 0 ? 16 : 2 * m->cap_nodes;
		m->nodes = xreallocarray(m->nodes, m->cap_nodes,
		    sizeof(*m->nodes));
	}
	nd = &m->nodes[m->n_nodes];
	memset(nd, 0, sizeof(*nd));
	nd->id = xstrdup(id);
	nd->name = name != NULL ? xstrdup(name) : NULL;
	ix->nodes.slots[s] = ++m->n_nodes;
	ix->nodes.n++;
	if (idxp != NULL)
		*idxp = m->n_nodes - 1;
	return 0;
}

int
model_add_link(struct model *m, const char *id, const char *a,
    const char *b, double capacity_bps, double te_metric, bool up,
    const char *where, struct err *e)
{
	struct model_index *ix;
	struct link *l;
	size_t s, ia, ib;
	int r;

	if ((r = check_id(id, where, "id", e)) != 0)
		return r;
	ix = index_get(m);
	s = table_ready(&ix->links, m->n_links, id, link_name, m->links);
	if (ix->links.slots[s] != 0)
		return bad(e, where, "id", "duplicate link id \"%s\"", id);
	if ((r = resolve(m, a, where, "a", &ia, e)) != 0 ||
	    (r = resolve(m, b, where, "b", &ib, e)) != 0)
		return r;
	if (ia == ib)
		return bad(e, where, "b", "a link needs two different ends");
	if (!isfinite(capacity_bps) || capacity_bps <= 0 ||
	    capacity_bps > MODEL_RATE_MAX)
		return bad(e, where, "capacity_bps",
		    "capacity must be a finite number in (0, %g] bit/s",
		    MODEL_RATE_MAX);
	if (!isfinite(te_metric) || te_metric <= 0 ||
	    te_metric > MODEL_METRIC_MAX)
		return bad(e, where, "te_metric",
		    "TE metric must be a finite number in (0, %g]",
		    MODEL_METRIC_MAX);
	if (m->n_links == m->cap_links) {
		m->cap_links = m->cap_links == 0 ? 16 : 2 * m->cap_links;
		m->links = xreallocarray(m->links, m->cap_links,
		    sizeof(*m->links));
	}
	l = &m->links[m->n_links];
	memset(l, 0, sizeof(*l));
	l->id = xstrdup(id);
	l->a = ia;
	l->b = ib;
	l->capacity_bps = capacity_bps;
	l->te_metric = te_metric;
	l->up = up;
	/* resolve() may have rebuilt the node table, never the link one. */
	ix->links.slots[s] = ++m->n_links;
	ix->links.n++;
	return 0;
}

static int
cmp_u32(const void *x, const void *y)
{
	uint32_t a = *(const uint32_t *)x, b = *(const uint32_t *)y;

	return a < b ? -1 : a > b;
}

int
model_set_link_srlgs(struct model *m, size_t i, const uint32_t *s,
    size_t n, const char *where, struct err *e)
{
	struct link *l = &m->links[i];
	size_t j, k;

	if (n > MODEL_SRLG_MAX)
		return bad(e, where, "srlgs", "a link is in at most %d SRLGs, "
		    "not %zu", MODEL_SRLG_MAX, n);
	free(l->srlgs);
	l->srlgs = NULL;
	l->n_srlgs = 0;
	if (n == 0)
		return 0;
	l->srlgs = xcalloc(n, sizeof(*l->srlgs));
	memcpy(l->srlgs, s, n * sizeof(*s));
	qsort(l->srlgs, n, sizeof(*l->srlgs), cmp_u32);
	for (j = k = 0; j < n; j++)
		if (k == 0 || l->srlgs[k - 1] != l->srlgs[j])
			l->srlgs[k++] = l->srlgs[j];
	l->n_srlgs = k;
	return 0;
}

const char *
model_text_problem(const char *s, size_t n, bool is_id)
{
	const unsigned char *p = (const unsigned char *)s;
	unsigned char lo, hi;
	size_t i = 0, k, more;

	while (i < n) {
		if (p[i] < 0x80) {
			if (is_id && p[i] == '/')
				return "must not contain '/'";
			i++;
			continue;
		}
		/* RFC 3629, section 4: the second byte's range depends on
		   the first; the others are 80..BF. */
		lo = 0x80;
		hi = 0xbf;
		if (p[i] >= 0xc2 && p[i] <= 0xdf)
			more = 1;
		else if (p[i] >= 0xe0 && p[i] <= 0xef) {
			more = 2;
			if (p[i] == 0xe0)
				lo = 0xa0;
			else if (p[i] == 0xed)
				hi = 0x9f;
		} else if (p[i] >= 0xf0 && p[i] <= 0xf4) {
			more = 3;
			if (p[i] == 0xf0)
				lo = 0x90;
			else if (p[i] == 0xf4)
				hi = 0x8f;
		} else
			return "is not valid UTF-8";
		if (n - i <= more || p[i + 1] < lo || p[i + 1] > hi)
			return "is not valid UTF-8";
		for (k = 2; k <= more; k++)
			if (p[i + k] < 0x80 || p[i + k] > 0xbf)
				return "is not valid UTF-8";
		i += more + 1;
	}
	return NULL;
}

bool
link_in_srlg(const struct link *l, uint32_t g)
{
	return l->n_srlgs > 0 && bsearch(&g, l->srlgs, l->n_srlgs,
	    sizeof(*l->srlgs), cmp_u32) != NULL;
}

/* Appends a demand between node indices; the caller has checked it. */
static void
push_demand(struct model *m, size_t src, size_t dst, double rate_bps,
    int priority)
{
	struct demand *d;

	if (m->n_demands == m->cap_demands) {
		m->cap_demands = m->cap_demands == 0 ? 64 :
		    2 * m->cap_demands;
		m->demands = xreallocarray(m->demands, m->cap_demands,
		    sizeof(*m->demands));
	}
	d = &m->demands[m->n_demands++];
	d->src = src;
	d->dst = dst;
	d->rate_bps = rate_bps;
	d->priority = priority;
}

int
model_add_demand(struct model *m, const char *src, const char *dst,
    double rate_bps, int priority, const char *where, struct err *e)
{
	size_t is, id;
	int r;

	if ((r = resolve(m, src, where, "src", &is, e)) != 0 ||
	    (r = resolve(m, dst, where, "dst", &id, e)) != 0)
		return r;
	if (is == id)
		return bad(e, where, "dst",
		    "a demand needs two different ends");
	if ((r = check_rate(rate_bps, where, "rate_bps", e)) != 0 ||
	    (r = check_prio(priority, where, e)) != 0)
		return r;
	push_demand(m, is, id, rate_bps, priority);
	return 0;
}

long
model_find_node(const struct model *m, const char *id)
{
	const struct model_index *ix = m->index;
	size_t i, s;

	if (id == NULL)
		return -1;
	if (ix != NULL && ix->nodes.slots != NULL &&
	    ix->nodes.n == m->n_nodes) {
		s = slot_of(&ix->nodes, id, node_name, m->nodes);
		return ix->nodes.slots[s] == 0 ? -1 :
		    (long)(ix->nodes.slots[s] - 1);
	}
	for (i = 0; i < m->n_nodes; i++)
		if (strcmp(m->nodes[i].id, id) == 0)
			return (long)i;
	return -1;
}

long
model_find_link(const struct model *m, const char *id)
{
	const struct model_index *ix = m->index;
	size_t i, s;

	if (id == NULL)
		return -1;
	if (ix != NULL && ix->links.slots != NULL &&
	    ix->links.n == m->n_links) {
		s = slot_of(&ix->links, id, link_name, m->links);
		return ix->links.slots[s] == 0 ? -1 :
		    (long)(ix->links.slots[s] - 1);
	}
	for (i = 0; i < m->n_links; i++)
		if (strcmp(m->links[i].id, id) == 0)
			return (long)i;
	return -1;
}

void
model_clear_demands(struct model *m)
{
	m->n_demands = 0;
	m->n_unplaced = 0;
	m->unplaced_bps = 0;
}

/* ---- matrices ---- */

struct matrix *
matrix_new(const char *name)
{
	struct matrix *mx = xcalloc(1, sizeof(*mx));

	mx->name = name != NULL ? xstrdup(name) : NULL;
	return mx;
}

void
matrix_free(struct matrix *mx)
{
	size_t i;

	if (mx == NULL)
		return;
	for (i = 0; i < mx->n; i++) {
		free(mx->entries[i].src);
		free(mx->entries[i].dst);
	}
	free(mx->entries);
	free(mx->name);
	free(mx);
}

void
matrix_add(struct matrix *mx, const char *src, const char *dst,
    double rate_bps, int priority)
{
	struct matrix_entry *me;

	if (mx->n == mx->cap) {
		mx->cap = mx->cap == 0 ? 64 : 2 * mx->cap;
		mx->entries = xreallocarray(mx->entries, mx->cap,
		    sizeof(*mx->entries));
	}
	me = &mx->entries[mx->n++];
	me->src = xstrdup(src != NULL ? src : "");
	me->dst = xstrdup(dst != NULL ? dst : "");
	me->rate_bps = rate_bps;
	me->priority = priority;
}

int
matrix_check(const struct matrix *mx, struct err *e)
{
	const struct matrix_entry *me;
	char where[64];
	size_t i;
	int r;

	for (i = 0; i < mx->n; i++) {
		me = &mx->entries[i];
		snprintf(where, sizeof(where), "demands[%zu]", i);
		if ((r = check_id(me->src, where, "src", e)) != 0 ||
		    (r = check_id(me->dst, where, "dst", e)) != 0)
			return r;
		if (strcmp(me->src, me->dst) == 0)
			return bad(e, where, "dst",
			    "a demand needs two different ends");
		if ((r = check_rate(me->rate_bps, where, "rate_bps", e)) != 0 ||
		    (r = check_prio(me->priority, where, e)) != 0)
			return r;
	}
	return 0;
}

int
model_set_matrix(struct model *m, const struct matrix *mx, struct err *e)
{
	const struct matrix_entry *me;
	char where[64];
	size_t i;
	int r;

	m->n_demands = 0;
	m->n_unplaced = 0;
	m->unplaced_bps = 0;
	for (i = 0; i < mx->n; i++) {
		me = &mx->entries[i];
		snprintf(where, sizeof(where), "demands[%zu]", i);
		if ((r = model_add_demand(m, me->src, me->dst, me->rate_bps,
		    me->priority, where, e)) != 0) {
			m->n_demands = 0;
			return r;
		}
	}
	return 0;
}

struct matrix *
model_get_matrix(const struct model *m, const char *name)
{
	struct matrix *mx = matrix_new(name);
	const struct demand *d;
	size_t i;

	for (i = 0; i < m->n_demands; i++) {
		d = &m->demands[i];
		matrix_add(mx, m->nodes[d->src].id, m->nodes[d->dst].id,
		    d->rate_bps, d->priority);
	}
	return mx;
}
