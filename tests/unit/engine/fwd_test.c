/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of the forwarding tables derived from plans (fwd.c). */

/*
 * Two kinds of check.  Hand-made plans on tiny networks, whose tables and
 * loads are derived by hand in the comment beside each case (a split at
 * an intermediate node, two sources sharing a destination, a loop made of
 * two sources' paths).  And plans solved by engine_solve for SNDlib
 * instances (tests/data/sndlib, PROVENANCE.md there), where the tables
 * must satisfy definitions that do not depend on how they were built:
 * fractions sum to one, each node's traffic towards a destination equals
 * what its sources inject plus what its neighbours send it (flow
 * conservation), and replaying the tables reproduces the plan's loads,
 * which the plan computes from its paths, to 1e-9 relative.
 */

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../tap.h"
#include "../../../daemon/engine/engine.h"
#include "../../../daemon/engine/fwd.h"
#include "../../../daemon/engine/sndlib.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"

#define DATA	"tests/data/sndlib/"

static void
node(struct model *m, const char *id)
{
	if (model_add_node(m, id, NULL, NULL, "nodes", NULL) != 0)
		abort();
}

static void
add_link(struct model *m, const char *id, const char *a, const char *b)
{
	if (model_add_link(m, id, a, b, 1e10, 1, true, "links", NULL) != 0)
		abort();
}

static void
demand(struct model *m, const char *s, const char *t, double rate)
{
	if (model_add_demand(m, s, t, rate, 0, "demands", NULL) != 0)
		abort();
}

/* The arc of link id running from node id `from`. */
static size_t
arc(const struct model *m, const char *link, const char *from)
{
	long l = model_find_link(m, link), v = model_find_node(m, from);

	if (l < 0 || v < 0)
		abort();
	return 2 * (size_t)l + (m->links[l].a == (size_t)v ? 0 : 1);
}

/* An empty plan that fits m; loads are set by the caller. */
static struct plan *
plan_for(const struct model *m)
{
	struct plan *p = xcalloc(1, sizeof(*p));

	p->n_routes = m->n_demands;
	p->routes = xcalloc(m->n_demands, sizeof(*p->routes));
	p->n_arcs = 2 * m->n_links;
	p->arcs = xcalloc(p->n_arcs, sizeof(*p->arcs));
	return p;
}

/*
 * Adds a path of rate to route k: links named in order, starting at the
 * demand's source.  Also adds the rate to the route's carried rate.
 */
static void
path(const struct model *m, struct plan *p, size_t k, double rate,
    const char *const *links, size_t n)
{
	struct plan_route *rt = &p->routes[k];
	struct plan_path *pp;
	const char *at = m->nodes[m->demands[k].src].id;
	const struct link *l;
	size_t i, a;

	rt->paths = xreallocarray(rt->paths, rt->n_paths + 1,
	    sizeof(*rt->paths));
	pp = &rt->paths[rt->n_paths++];
	pp->arcs = xcalloc(n, sizeof(*pp->arcs));
	pp->n_arcs = n;
	pp->rate_bps = rate;
	for (i = 0; i < n; i++) {
		a = arc(m, links[i], at);
		pp->arcs[i] = a;
		l = &m->links[a / 2];
		at = m->nodes[a % 2 == 0 ? l->b : l->a].id;
	}
	rt->carried_bps += rate;
}

static void
load(const struct model *m, struct plan *p, const char *link,
    const char *from, double bps)
{
	p->arcs[arc(m, link, from)].load_bps = bps;
}

static const struct fwd_entry *
entry(const struct fwd *f, const struct model *m, const char *v,
    const char *t)
{
	return fwd_find(f, (size_t)model_find_node(m, v),
	    (size_t)model_find_node(m, t));
}

/* The fraction of entry en's hop over link towards node next, or -1. */
static double
frac(const struct fwd *f, const struct model *m, const struct fwd_entry *en,
    const char *link, const char *next)
{
	const struct fwd_hop *h;
	size_t i;

	if (en == NULL)
		return -1;
	h = fwd_hops(f, en);
	for (i = 0; i < en->n_hops; i++)
		if (strcmp(m->links[h[i].arc / 2].id, link) == 0 &&
		    strcmp(m->nodes[h[i].next].id, next) == 0)
			return h[i].frac;
	return -1;
}

/*
 * S -- X, then X -- Y1 -- T and X -- Y2 -- T.  One demand S -> T of 10G,
 * planned as S-X-Y1-T 6G and S-X-Y2-T 4G.  By hand: S sends all 10G to X
 * (fraction 1); X splits 6/10 = 0.6 to Y1 and 0.4 to Y2; Y1 and Y2 send
 * all they get to T.  Loads: sx 10G, xy1 and y1t 6G, xy2 and y2t 4G.
 */
static void
test_split(void)
{
	static const char *const p1[] = { "sx", "xy1", "y1t" };
	static const char *const p2[] = { "sx", "xy2", "y2t" };
	struct model *m = model_new();
	struct plan *p;
	struct fwd *f = NULL;
	const struct fwd_entry *en;
	struct err e;
	double dev = -1;

	node(m, "S");
	node(m, "X");
	node(m, "Y1");
	node(m, "Y2");
	node(m, "T");
	add_link(m, "sx", "S", "X");
	add_link(m, "xy1", "X", "Y1");
	add_link(m, "xy2", "X", "Y2");
	add_link(m, "y1t", "Y1", "T");
	add_link(m, "y2t", "Y2", "T");
	demand(m, "S", "T", 10e9);
	p = plan_for(m);
	path(m, p, 0, 6e9, p1, 3);
	path(m, p, 0, 4e9, p2, 3);
	load(m, p, "sx", "S", 10e9);
	load(m, p, "xy1", "X", 6e9);
	load(m, p, "y1t", "Y1", 6e9);
	load(m, p, "xy2", "X", 4e9);
	load(m, p, "y2t", "Y2", 4e9);

	TEST_START("splits 0.6 / 0.4 at an intermediate node (by hand)");
	err_clear(&e);
	ASSERT_INT_EQ(fwd_build(m, p, &f, &e), 0);
	if (f != NULL) {
		ASSERT_INT_EQ(fwd_n_entries(f), 4);
		ASSERT_INT_EQ(fwd_n_loops(f), 0);
		en = entry(f, m, "S", "T");
		ASSERT_TRUE(en != NULL && en->n_hops == 1);
		ASSERT_DBL_NEAR(frac(f, m, en, "sx", "X"), 1, 1e-15);
		en = entry(f, m, "X", "T");
		ASSERT_TRUE(en != NULL && en->n_hops == 2);
		ASSERT_DBL_NEAR(en->through_bps, 10e9, 1e-15);
		ASSERT_DBL_NEAR(frac(f, m, en, "xy1", "Y1"), 0.6, 1e-15);
		ASSERT_DBL_NEAR(frac(f, m, en, "xy2", "Y2"), 0.4, 1e-15);
		ASSERT_DBL_NEAR(frac(f, m, entry(f, m, "Y1", "T"), "y1t",
		    "T"), 1, 1e-15);
		ASSERT_DBL_NEAR(frac(f, m, entry(f, m, "Y2", "T"), "y2t",
		    "T"), 1, 1e-15);
		ASSERT_TRUE(entry(f, m, "T", "T") == NULL);
		ASSERT_TRUE(entry(f, m, "X", "S") == NULL);
	}
	TEST_DONE();

	TEST_START("replaying the split reproduces the hand-derived loads");
	ASSERT_TRUE(f != NULL);
	if (f != NULL) {
		ASSERT_INT_EQ(fwd_check_loads(m, p, f, &dev, &e), 0);
		ASSERT_TRUE(dev <= 1e-12);
	}
	TEST_DONE();

	TEST_START("a replay notices loads the tables do not give");
	load(m, p, "xy1", "X", 7e9);
	ASSERT_TRUE(f != NULL);
	if (f != NULL) {
		ASSERT_INT_EQ(fwd_check_loads(m, p, f, &dev, &e), 0);
		/* |6G - 7G| / 7G */
		ASSERT_DBL_NEAR(dev, 1.0 / 7, 1e-12);
	}
	TEST_DONE();
	fwd_free(f);
	plan_free(p);
	model_free(m);
}

/*
 * A -- X, B -- X, X -- T, X -- Y -- T.  Demands A -> T 6G over A-X-T and
 * B -> T 4G over B-X-Y-T.  Towards T, X receives 10G (6 + 4) and sends 6G
 * to T and 4G to Y: fractions 0.6 and 0.4, whichever source the traffic
 * came from.  A router at X cannot tell the sources apart, so A's traffic
 * is split as well, yet the loads come out the same: xt gets 0.6 x 10G =
 * 6G and xy, yt 0.4 x 10G = 4G, which is the plan (ax 6G, bx 4G).
 */
static void
test_two_sources(void)
{
	static const char *const pa[] = { "ax", "xt" };
	static const char *const pb[] = { "bx", "xy", "yt" };
	struct model *m = model_new();
	struct plan *p;
	struct fwd *f = NULL;
	const struct fwd_entry *en;
	struct err e;
	double dev = -1;
	size_t i, n, first;

	node(m, "A");
	node(m, "B");
	node(m, "X");
	node(m, "Y");
	node(m, "T");
	add_link(m, "ax", "A", "X");
	add_link(m, "bx", "B", "X");
	add_link(m, "xt", "X", "T");
	add_link(m, "xy", "X", "Y");
	add_link(m, "yt", "Y", "T");
	demand(m, "A", "T", 6e9);
	demand(m, "B", "T", 4e9);
	p = plan_for(m);
	path(m, p, 0, 6e9, pa, 2);
	path(m, p, 1, 4e9, pb, 3);
	load(m, p, "ax", "A", 6e9);
	load(m, p, "bx", "B", 4e9);
	load(m, p, "xt", "X", 6e9);
	load(m, p, "xy", "X", 4e9);
	load(m, p, "yt", "Y", 4e9);

	TEST_START("two sources sharing a destination merge at X (by hand)");
	err_clear(&e);
	ASSERT_INT_EQ(fwd_build(m, p, &f, &e), 0);
	if (f != NULL) {
		en = entry(f, m, "X", "T");
		ASSERT_TRUE(en != NULL && en->n_hops == 2);
		ASSERT_DBL_NEAR(en->through_bps, 10e9, 1e-15);
		ASSERT_DBL_NEAR(frac(f, m, en, "xt", "T"), 0.6, 1e-15);
		ASSERT_DBL_NEAR(frac(f, m, en, "xy", "Y"), 0.4, 1e-15);
		ASSERT_DBL_NEAR(frac(f, m, entry(f, m, "A", "T"), "ax", "X"),
		    1, 1e-15);
		ASSERT_DBL_NEAR(frac(f, m, entry(f, m, "B", "T"), "bx", "X"),
		    1, 1e-15);
		first = fwd_node_entries(f, (size_t)model_find_node(m, "X"),
		    &n);
		ASSERT_INT_EQ(n, 1);
		for (i = first; i < first + n; i++)
			ASSERT_INT_EQ(fwd_entry(f, i)->node,
			    model_find_node(m, "X"));
		ASSERT_INT_EQ(fwd_check_loads(m, p, f, &dev, &e), 0);
		ASSERT_TRUE(dev <= 1e-12);
	}
	TEST_DONE();
	fwd_free(f);
	plan_free(p);
	model_free(m);
}

/*
 * A -- U, B -- V, U -- V, U -- T, V -- T.  Demands A -> T 3G over
 * A-U-V-T and B -> T 2G over B-V-U-T.  Towards T, U sends 3G to V and 2G
 * to T; V sends 3G to T and 2G to U: U -> V -> U is a cycle of the
 * per-destination flow (a cost-minimal plan would not hold it: swapping
 * the tails gives A-U-T and B-V-T, cheaper and lighter).  The tables must
 * report the loop and the replay must refuse it.
 */
static void
test_loop(void)
{
	static const char *const pa[] = { "au", "uv", "vt" };
	static const char *const pb[] = { "bv", "uv", "ut" };
	struct model *m = model_new();
	struct plan *p;
	struct fwd *f = NULL;
	const struct fwd_loop *lp;
	struct err e;
	double dev = -1;
	long u, v;

	node(m, "A");
	node(m, "B");
	node(m, "U");
	node(m, "V");
	node(m, "T");
	add_link(m, "au", "A", "U");
	add_link(m, "bv", "B", "V");
	add_link(m, "uv", "U", "V");
	add_link(m, "ut", "U", "T");
	add_link(m, "vt", "V", "T");
	demand(m, "A", "T", 3e9);
	demand(m, "B", "T", 2e9);
	p = plan_for(m);
	path(m, p, 0, 3e9, pa, 3);
	path(m, p, 1, 2e9, pb, 3);
	u = model_find_node(m, "U");
	v = model_find_node(m, "V");

	TEST_START("reports a loop of two sources' paths towards one sink");
	err_clear(&e);
	ASSERT_INT_EQ(fwd_build(m, p, &f, &e), 0);
	if (f != NULL) {
		ASSERT_INT_EQ(fwd_n_loops(f), 1);
		lp = fwd_loop(f, 0);
		ASSERT_TRUE(lp != NULL);
		if (lp != NULL) {
			ASSERT_INT_EQ(lp->dst, model_find_node(m, "T"));
			ASSERT_INT_EQ(lp->n_nodes, 3);
			ASSERT_INT_EQ(lp->nodes[0], lp->nodes[2]);
			ASSERT_TRUE((lp->nodes[0] == (size_t)u &&
			    lp->nodes[1] == (size_t)v) ||
			    (lp->nodes[0] == (size_t)v &&
			    lp->nodes[1] == (size_t)u));
		}
		ASSERT_DBL_NEAR(frac(f, m, entry(f, m, "U", "T"), "uv", "V"),
		    0.6, 1e-15);
		ASSERT_DBL_NEAR(frac(f, m, entry(f, m, "V", "T"), "uv", "U"),
		    0.4, 1e-15);
	}
	TEST_DONE();

	TEST_START("the replay refuses a destination whose hops loop");
	ASSERT_TRUE(f != NULL);
	if (f != NULL) {
		err_clear(&e);
		ASSERT_INT_EQ(fwd_check_loads(m, p, f, &dev, &e),
		    ERR_INVALID);
		ASSERT_TRUE(strstr(e.msg, "loop") != NULL);
	}
	TEST_DONE();
	fwd_free(f);
	f = NULL;

	TEST_START("refuses a path that does not start at its source");
	p->routes[1].paths[0].arcs[0] = arc(m, "au", "A");
	err_clear(&e);
	ASSERT_INT_EQ(fwd_build(m, p, &f, &e), ERR_INVALID);
	ASSERT_TRUE(f == NULL);
	TEST_DONE();
	plan_free(p);
	model_free(m);
}

/* Reads a whole file into a new string of *lenp bytes, or NULL. */
static char *
slurp(const char *path, size_t *lenp)
{
	FILE *fp = fopen(path, "rb");
	char *buf = NULL;
	long n;

	*lenp = 0;
	if (fp == NULL)
		return NULL;
	if (fseek(fp, 0, SEEK_END) == 0 && (n = ftell(fp)) >= 0 &&
	    fseek(fp, 0, SEEK_SET) == 0) {
		buf = xmalloc((size_t)n + 1);
		*lenp = fread(buf, 1, (size_t)n, fp);
		buf[*lenp] = '\0';
	}
	fclose(fp);
	return buf;
}

/*
 * Definitions every table set must meet, independent of fwd.c's
 * bookkeeping: fractions in (0, 1] summing to one; for each (node v,
 * destination t) the traffic leaving v equals what v's own demands to t
 * carry plus the hop rates arriving at v from other entries of t (flow
 * conservation); and the entry's hop rates are its through rate times the
 * fractions.  Returns the number of violations.
 */
static int
check_tables(const struct model *m, const struct plan *p,
    const struct fwd *f)
{
	const struct fwd_entry *en, *o;
	const struct fwd_hop *h;
	double sum, in, scale = 0;
	size_t i, j, k;
	int bad = 0;

	for (k = 0; k < p->n_routes; k++)
		scale = fmax(scale, p->routes[k].carried_bps);
	for (i = 0; i < fwd_n_entries(f); i++) {
		en = fwd_entry(f, i);
		h = fwd_hops(f, en);
		sum = 0;
		for (j = 0; j < en->n_hops; j++) {
			if (!(h[j].frac > 0 && h[j].frac <= 1 + 1e-15))
				bad++;
			if (fabs(h[j].rate_bps - h[j].frac * en->through_bps) >
			    1e-12 * en->through_bps)
				bad++;
			sum += h[j].frac;
		}
		if (fabs(sum - 1) > 1e-12)
			bad++;
		in = 0;
		for (k = 0; k < m->n_demands; k++)
			if (m->demands[k].src == en->node &&
			    m->demands[k].dst == en->dst)
				in += p->routes[k].carried_bps;
		for (k = 0; k < fwd_n_entries(f); k++) {
			o = fwd_entry(f, k);
			if (o->dst != en->dst)
				continue;
			h = fwd_hops(f, o);
			for (j = 0; j < o->n_hops; j++)
				if (h[j].next == en->node)
					in += h[j].rate_bps;
		}
		if (fabs(in - en->through_bps) > 1e-9 * fmax(scale, 1))
			bad++;
	}
	return bad;
}

/*
 * SNDlib instances solved by engine_solve under both objectives: tables
 * meet check_tables() and the replay reproduces the plan's loads to 1e-9
 * relative.  A cost-minimal plan should hold no loop (see fwd.h); a loop
 * would be reported, so the test says so rather than hiding it.
 */
static void
test_sndlib(void)
{
	static const char *const names[] = { "abilene", "polska", "nobel-eu",
	    "atlanta", "geant", "germany50" };
	struct model *m;
	struct plan *p;
	struct fwd *f;
	struct err e;
	char path[128], title[160], *text;
	double dev;
	size_t i, len;
	int obj;

	for (i = 0; i < sizeof(names) / sizeof(names[0]); i++) {
		for (obj = OBJ_COST; obj <= OBJ_BALANCE; obj++) {
			snprintf(title, sizeof(title), "%s, %s objective: "
			    "replaying the tables gives the plan's loads",
			    names[i], obj == OBJ_COST ? "cost" : "balance");
			TEST_START(title);
			m = NULL;
			p = NULL;
			f = NULL;
			dev = -1;
			snprintf(path, sizeof(path), DATA "%s.txt", names[i]);
			text = slurp(path, &len);
			err_clear(&e);
			ASSERT_TRUE(text != NULL);
			if (text != NULL)
				ASSERT_INT_EQ(sndlib_parse(text, len, &m, &e),
				    0);
			if (m != NULL) {
				m->policy.objective = obj;
				ASSERT_INT_EQ(engine_solve(m, NULL, &p, &e), 0);
			}
			if (p != NULL)
				ASSERT_INT_EQ(fwd_build(m, p, &f, &e), 0);
			if (f != NULL) {
				ASSERT_TRUE(fwd_n_entries(f) > 0);
				ASSERT_INT_EQ(fwd_n_loops(f), 0);
				ASSERT_INT_EQ(check_tables(m, p, f), 0);
				ASSERT_INT_EQ(fwd_check_loads(m, p, f, &dev,
				    &e), 0);
				ASSERT_TRUE(dev >= 0 && dev <= 1e-9);
				printf("# %s: %zu entries, max deviation "
				    "%.3g\n", names[i], fwd_n_entries(f), dev);
			}
			if (e.code != 0)
				printf("# %s: %s\n", e.where, e.msg);
			TEST_DONE();
			fwd_free(f);
			plan_free(p);
			model_free(m);
			free(text);
		}
	}
	engine_thread_done();
}

int
main(void)
{
	test_split();
	test_two_sources();
	test_loop();
	test_sndlib();
	return tap_finish();
}
