/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The scenarios of a sweep kind and the solve of one of them. */

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "sweepset.h"
#include "base/clock.h"
#include "base/err.h"
#include "base/xalloc.h"
#include "engine/engine.h"
#include "../api/codec_sweep.h"
#include "../storage/db.h"

/* ---- the scenarios of a kind ---- */

struct builder {
	size_t n, cap_sc, n_links, cap_links;
	size_t *off, *links;
	char **fail_json;
};

static void
add_link(struct builder *b, size_t l)
{
	if (b->n_links == b->cap_links) {
		b->cap_links = 2 * b->cap_links + 64;
		b->links = xreallocarray(b->links, b->cap_links,
		    sizeof(*b->links));
	}
	b->links[b->n_links++] = l;
}

/* Closes the scenario being built, labelled by fail_json (taken). */
static void
close_scenario(struct builder *b, char *fail_json)
{
	if (b->n + 1 >= b->cap_sc) {
		b->cap_sc = 2 * b->cap_sc + 64;
		b->off = xreallocarray(b->off, b->cap_sc + 1,
		    sizeof(*b->off));
		b->fail_json = xreallocarray(b->fail_json, b->cap_sc + 1,
		    sizeof(*b->fail_json));
	}
	b->fail_json[b->n] = fail_json;
	b->n++;
	b->off[b->n] = b->n_links;
}

static int
cmp_u32(const void *x, const void *y)
{
	uint32_t a = *(const uint32_t *)x, c = *(const uint32_t *)y;

	return a < c ? -1 : a > c;
}

int
sweepset_count(const struct model *m, const char *kind, long *np,
    struct err *e)
{
	size_t l, up = 0;

	*np = 0;
	for (l = 0; l < m->n_links; l++)
		up += m->links[l].up;
	if (strcmp(kind, "links") == 0)
		*np = (long)up;
	else if (strcmp(kind, "nodes") == 0)
		*np = (long)m->n_nodes;
	else if (strcmp(kind, "link-pairs") == 0)
		*np = up < 2 ? 0 : (long)(up * (up - 1) / 2);
	else if (strcmp(kind, "srlgs") == 0)
		*np = -1;	/* counted when built */
	else
		return err_set(e, ERR_INVALID, "kind", "unknown sweep kind "
		    "\"%s\" (links, nodes, srlgs, link-pairs)", kind);
	return 0;
}

static void
build_srlgs(struct builder *b, const struct model *m)
{
	uint32_t *g = NULL;
	size_t l, j, n_g = 0, cap_g = 0, i;

	for (l = 0; l < m->n_links; l++)
		for (j = 0; m->links[l].up && j < m->links[l].n_srlgs; j++) {
			if (n_g == cap_g) {
				cap_g = 2 * cap_g + 16;
				g = xreallocarray(g, cap_g, sizeof(*g));
			}
			g[n_g++] = m->links[l].srlgs[j];
		}
	if (n_g > 0)
		qsort(g, n_g, sizeof(*g), cmp_u32);
	for (i = 0; i < n_g; i++) {
		if (i > 0 && g[i] == g[i - 1])
			continue;
		for (l = 0; l < m->n_links; l++)
			if (m->links[l].up && link_in_srlg(&m->links[l], g[i]))
				add_link(b, l);
		close_scenario(b, codec_fail_srlg_json(g[i]));
	}
	free(g);
}

int
sweepset_build(const struct model *m, const char *kind,
    struct sweepset *set, struct err *e)
{
	struct builder b = { 0 };
	const char *ids[2];
	size_t l, j, v;
	long total;
	int r;

	memset(set, 0, sizeof(*set));
	if ((r = sweepset_count(m, kind, &total, e)) != 0)
		return r;
	b.off = xcalloc(1, sizeof(*b.off));
	if (strcmp(kind, "links") == 0) {
		for (l = 0; l < m->n_links; l++) {
			if (!m->links[l].up)
				continue;
			add_link(&b, l);
			ids[0] = m->links[l].id;
			close_scenario(&b, codec_fail_json("links", ids, 1));
		}
	} else if (strcmp(kind, "link-pairs") == 0) {
		for (l = 0; l < m->n_links; l++)
			for (j = l + 1; m->links[l].up && j < m->n_links; j++) {
				if (!m->links[j].up)
					continue;
				add_link(&b, l);
				add_link(&b, j);
				ids[0] = m->links[l].id;
				ids[1] = m->links[j].id;
				close_scenario(&b, codec_fail_json("links", ids,
				    2));
			}
	} else if (strcmp(kind, "nodes") == 0) {
		for (v = 0; v < m->n_nodes; v++) {
			for (l = 0; l < m->n_links; l++)
				if (m->links[l].up && (m->links[l].a == v ||
				    m->links[l].b == v))
					add_link(&b, l);
			ids[0] = m->nodes[v].id;
			close_scenario(&b, codec_fail_json("nodes", ids, 1));
		}
	} else
		build_srlgs(&b, m);
	set->n = b.n;
	set->off = b.off;
	set->links = b.links;
	set->fail_json = b.fail_json;
	return 0;
}

void
sweepset_clear(struct sweepset *set)
{
	size_t i;

	if (set == NULL)
		return;
	for (i = 0; i < set->n; i++)
		free(set->fail_json[i]);
	free(set->fail_json);
	free(set->off);
	free(set->links);
	memset(set, 0, sizeof(*set));
}

/* ---- one scenario ---- */

int
sweepset_solve(const struct engine_seed *sd, const struct model *m,
    double time_limit_s, struct plan **pp, struct err *e)
{
	struct engine_state *st;
	struct solve_opts o;
	int r;

	solve_opts_default(&o);
	o.time_limit_s = time_limit_s;
	if (m->policy.formulation != FORM_PATH)
		return engine_solve(m, &o, pp, e);
	st = engine_state_from_seed(sd);
	r = engine_solve_warm(&st, m, &o, pp, e);
	engine_state_free(st);
	return r;
}

void
sweepset_eval(const struct sweepset *set, size_t i, const struct model *live,
    const struct engine_seed *sd, double scale, double time_limit_s,
    struct db_sweep_result *res, struct plan **pp)
{
	struct model *m = model_copy(live);
	struct err e = { 0 };
	struct plan *p = NULL;
	double t0 = clock_ms();
	size_t j, k;
	int r;

	for (j = set->off[i]; j < set->off[i + 1]; j++)
		m->links[set->links[j]].up = false;
	if (scale != 1)
		for (k = 0; k < m->n_demands; k++)
			m->demands[k].rate_bps *= scale;
	r = sweepset_solve(sd, m, time_limit_s, &p, &e);
	memset(res, 0, sizeof(*res));
	res->idx = (long)i;
	res->fail_json = xstrdup(set->fail_json[i]);
	res->solve_ms = clock_ms() - t0;
	if (r != 0) {
		snprintf(res->status, sizeof(res->status), "failed");
		res->error = xstrdup(e.msg);
		res->moved_bps = -1;
	} else {
		snprintf(res->status, sizeof(res->status), "%s",
		    plan_status_str(p->status));
		res->max_util = p->max_util;
		res->carried_bps = p->carried_bps;
		res->unserved_bps = p->unserved_bps;
		res->total_cost = p->total_cost;
		res->moved_bps = p->moved_bps;
	}
	model_free(m);
	*pp = p;
}

void
sweepset_worst(double *worst, long *worst_idx, const struct plan *p,
    long idx)
{
	size_t a;

	for (a = 0; p != NULL && a < p->n_arcs; a++)
		if (p->arcs[a].load_bps > worst[a]) {
			worst[a] = p->arcs[a].load_bps;
			worst_idx[a] = idx;
		}
}
