/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What-if scenarios applied to a copy of the model; cut-off demands. */

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "scenario.h"
#include "../base/err.h"
#include "../base/xalloc.h"

struct scenario *
scenario_new(void)
{
	struct scenario *sc = xcalloc(1, sizeof(*sc));

	sc->scale = 1;
	return sc;
}

static void
free_ids(char **ids, size_t n)
{
	size_t i;

	for (i = 0; i < n; i++)
		free(ids[i]);
	free(ids);
}

void
scenario_free(struct scenario *sc)
{
	size_t i;

	if (sc == NULL)
		return;
	free_ids(sc->fail_links, sc->n_fail_links);
	free_ids(sc->fail_nodes, sc->n_fail_nodes);
	free(sc->fail_srlgs);
	for (i = 0; i < sc->n_scales; i++) {
		free_ids(sc->scales[i].from, sc->scales[i].n_from);
		free_ids(sc->scales[i].to, sc->scales[i].n_to);
	}
	free(sc->scales);
	for (i = 0; i < sc->n_links; i++)
		free(sc->links[i].id);
	free(sc->links);
	for (i = 0; i < sc->n_add; i++) {
		free(sc->add[i].id);
		free(sc->add[i].a);
		free(sc->add[i].b);
		free(sc->add[i].srlgs);
	}
	free(sc->add);
	free(sc);
}

static bool
factor_ok(double f)
{
	return isfinite(f) && f >= 0;
}

/* Looks up ids[i] as a node (or link); ERR_INVALID names where[i]. */
static int
find_all(const struct model *m, char **ids, size_t n, bool links,
    const char *where, long *idx, struct err *e)
{
	size_t i;
	long x;

	for (i = 0; i < n; i++) {
		x = links ? model_find_link(m, ids[i]) :
		    model_find_node(m, ids[i]);
		if (x < 0) {
			char w[96];

			snprintf(w, sizeof(w), "%s[%zu]", where, i);
			return err_set(e, ERR_INVALID, w, "unknown %s \"%s\"",
			    links ? "link" : "node", ids[i]);
		}
		if (idx != NULL)
			idx[i] = x;
	}
	return 0;
}

/* Checks what can be checked against live before anything is copied. */
static int
check(const struct model *live, const struct scenario *sc, struct err *e)
{
	const struct scenario_scale *ss;
	const struct scenario_link *sl;
	size_t i, l, g;
	bool found;
	char w[96];
	int r;

	if ((r = find_all(live, sc->fail_links, sc->n_fail_links, true,
	    "fail.links", NULL, e)) != 0 ||
	    (r = find_all(live, sc->fail_nodes, sc->n_fail_nodes, false,
	    "fail.nodes", NULL, e)) != 0)
		return r;
	for (g = 0; g < sc->n_fail_srlgs; g++) {
		found = false;
		for (l = 0; l < live->n_links && !found; l++)
			found = link_in_srlg(&live->links[l],
			    sc->fail_srlgs[g]);
		for (i = 0; i < sc->n_add && !found; i++)
			for (l = 0; l < sc->add[i].n_srlgs && !found; l++)
				found = sc->add[i].srlgs[l] ==
				    sc->fail_srlgs[g];
		if (!found) {
			snprintf(w, sizeof(w), "fail.srlgs[%zu]", g);
			return err_set(e, ERR_INVALID, w, "no link is in SRLG "
			    "%lu", (unsigned long)sc->fail_srlgs[g]);
		}
	}
	if (!factor_ok(sc->scale))
		return err_set(e, ERR_INVALID, "scale", "the factor must be "
		    "a finite number >= 0");
	for (i = 0; i < sc->n_scales; i++) {
		ss = &sc->scales[i];
		snprintf(w, sizeof(w), "scale_demands[%zu].from", i);
		if ((r = find_all(live, ss->from, ss->n_from, false, w, NULL,
		    e)) != 0)
			return r;
		snprintf(w, sizeof(w), "scale_demands[%zu].to", i);
		if ((r = find_all(live, ss->to, ss->n_to, false, w, NULL,
		    e)) != 0)
			return r;
		if (!factor_ok(ss->factor)) {
			snprintf(w, sizeof(w), "scale_demands[%zu].factor", i);
			return err_set(e, ERR_INVALID, w, "the factor must be "
			    "a finite number >= 0");
		}
	}
	for (i = 0; i < sc->n_links; i++) {
		sl = &sc->links[i];
		if (model_find_link(live, sl->id) < 0) {
			snprintf(w, sizeof(w), "links[%zu].id", i);
			return err_set(e, ERR_INVALID, w, "unknown link \"%s\"",
			    sl->id);
		}
		snprintf(w, sizeof(w), "links[%zu]", i);
		if (sl->has_capacity && (!isfinite(sl->capacity_bps) ||
		    sl->capacity_bps <= 0 || sl->capacity_bps > MODEL_RATE_MAX))
			return err_set(e, ERR_INVALID, w, "capacity must be a "
			    "finite number in (0, %g] bit/s", MODEL_RATE_MAX);
		if (sl->has_metric && (!isfinite(sl->te_metric) ||
		    sl->te_metric <= 0 || sl->te_metric > MODEL_METRIC_MAX))
			return err_set(e, ERR_INVALID, w, "TE metric must be "
			    "a finite number in (0, %g]", MODEL_METRIC_MAX);
	}
	return 0;
}

/* Scales the demands from a node in ss->from to one in ss->to. */
static void
scale_sites(struct model *m, const struct scenario_scale *ss)
{
	bool *in_from, *in_to;
	size_t i, k;

	in_from = xcalloc(m->n_nodes + 1, sizeof(*in_from));
	in_to = xcalloc(m->n_nodes + 1, sizeof(*in_to));
	for (i = 0; i < m->n_nodes; i++) {
		in_from[i] = ss->all_from;
		in_to[i] = ss->all_to;
	}
	for (i = 0; i < ss->n_from; i++)
		in_from[model_find_node(m, ss->from[i])] = true;
	for (i = 0; i < ss->n_to; i++)
		in_to[model_find_node(m, ss->to[i])] = true;
	for (k = 0; k < m->n_demands; k++)
		if (in_from[m->demands[k].src] && in_to[m->demands[k].dst])
			m->demands[k].rate_bps = fmin(MODEL_RATE_MAX,
			    m->demands[k].rate_bps * ss->factor);
	free(in_from);
	free(in_to);
}

int
scenario_apply(const struct model *live, const struct scenario *sc,
    struct model **outp, size_t **failedp, size_t *n_failedp,
    struct err *e)
{
	const struct scenario_link *sl;
	const struct scenario_new_link *nl;
	struct model *m;
	bool *was_up;
	size_t i, l, g, n_live = live->n_links, n;
	long x;
	char w[96];
	int r;

	*outp = NULL;
	if (failedp != NULL)
		*failedp = NULL;
	if (n_failedp != NULL)
		*n_failedp = 0;
	if ((r = check(live, sc, e)) != 0)
		return r;
	m = model_copy(live);
	for (i = 0; i < sc->n_links; i++) {
		sl = &sc->links[i];
		x = model_find_link(m, sl->id);
		if (sl->has_capacity)
			m->links[x].capacity_bps = sl->capacity_bps;
		if (sl->has_metric)
			m->links[x].te_metric = sl->te_metric;
		if (sl->has_state)
			m->links[x].up = sl->up;
	}
	for (i = 0; i < sc->n_add; i++) {
		nl = &sc->add[i];
		snprintf(w, sizeof(w), "add_links[%zu]", i);
		if ((r = model_add_link(m, nl->id, nl->a, nl->b,
		    nl->capacity_bps, nl->te_metric, true, w, e)) != 0 ||
		    (r = model_set_link_srlgs(m, m->n_links - 1, nl->srlgs,
		    nl->n_srlgs, w, e)) != 0) {
			model_free(m);
			return r;
		}
	}
	/* Failures count against the links as edited and added. */
	was_up = xcalloc(m->n_links + 1, sizeof(*was_up));
	for (l = 0; l < m->n_links; l++)
		was_up[l] = m->links[l].up;
	for (i = 0; i < sc->n_fail_links; i++)
		m->links[model_find_link(m, sc->fail_links[i])].up = false;
	for (i = 0; i < sc->n_fail_nodes; i++) {
		x = model_find_node(m, sc->fail_nodes[i]);
		for (l = 0; l < m->n_links; l++)
			if (m->links[l].a == (size_t)x ||
			    m->links[l].b == (size_t)x)
				m->links[l].up = false;
	}
	for (g = 0; g < sc->n_fail_srlgs; g++)
		for (l = 0; l < m->n_links; l++)
			if (link_in_srlg(&m->links[l], sc->fail_srlgs[g]))
				m->links[l].up = false;
	if (sc->scale != 1)
		for (i = 0; i < m->n_demands; i++)
			m->demands[i].rate_bps = fmin(MODEL_RATE_MAX,
			    m->demands[i].rate_bps * sc->scale);
	for (i = 0; i < sc->n_scales; i++)
		scale_sites(m, &sc->scales[i]);
	n = 0;
	for (l = 0; l < m->n_links; l++)
		n += (l >= n_live || live->links[l].up) && was_up[l] &&
		    !m->links[l].up;
	if (failedp != NULL) {
		*failedp = xcalloc(n + 1, sizeof(**failedp));
		n = 0;
		for (l = 0; l < m->n_links; l++)
			if ((l >= n_live || live->links[l].up) && was_up[l] &&
			    !m->links[l].up)
				(*failedp)[n++] = l;
	}
	if (n_failedp != NULL)
		*n_failedp = n;
	free(was_up);
	*outp = m;
	return 0;
}

void
model_use_matrix(struct model *m, const struct matrix *mx)
{
	const struct matrix_entry *en;
	struct err e;
	size_t i;

	model_clear_demands(m);
	for (i = 0; i < mx->n; i++) {
		en = &mx->entries[i];
		err_clear(&e);
		if (model_add_demand(m, en->src, en->dst, en->rate_bps,
		    en->priority, "", &e) != 0) {
			m->n_unplaced++;
			m->unplaced_bps += en->rate_bps;
		}
	}
}

/* Union-find root with path halving. */
static size_t
root(size_t *par, size_t v)
{
	while (par[v] != v) {
		par[v] = par[par[v]];
		v = par[v];
	}
	return v;
}

size_t
model_cut_off(const struct model *m, bool *cut, double *ratep)
{
	size_t *par, i, k, a, b, n = 0;
	double rate = 0;
	bool off;

	par = xcalloc(m->n_nodes + 1, sizeof(*par));
	for (i = 0; i < m->n_nodes; i++)
		par[i] = i;
	for (i = 0; i < m->n_links; i++) {
		if (!m->links[i].up)
			continue;
		a = root(par, m->links[i].a);
		b = root(par, m->links[i].b);
		if (a != b)
			par[a] = b;
	}
	for (k = 0; k < m->n_demands; k++) {
		off = m->demands[k].rate_bps > 0 &&
		    root(par, m->demands[k].src) !=
		    root(par, m->demands[k].dst);
		if (cut != NULL)
			cut[k] = off;
		if (off) {
			n++;
			rate += m->demands[k].rate_bps;
		}
	}
	free(par);
	if (ratep != NULL)
		*ratep = rate;
	return n;
}
