/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Renders a published plan into the JSON texts the plan routes serve. */

/*
 * DESIGN
 * The summary is rendered on the solver thread when a plan is published,
 * once per plan; the list entries on HTTP threads as a reply is streamed
 * (api/plan_list.c), both through route_json() and link_json(), so the
 * whole texts and the streamed ones are the same bytes.  The plan's arrays
 * run parallel to the model (routes[k] is demands[k]; arcs[2i] is link i
 * a->b, arcs[2i+1] is b->a), which this file checks before indexing (the
 * whole plan at publication, each entry again as it is streamed), so a
 * mismatched pair gives ERR_INTERNAL instead of a wild read.  A path's
 * node list is walked from the demand's source along its arcs.  Demands of
 * the matrix that name nodes missing from the topology are not in the
 * model's demands; the summary reports their count and rate from the model
 * and adds a warning sentence, so nothing is left out silently.
 */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "codec_plan.h"
#include "codec_json.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/engine/model.h"
#include "../daemon/engine/plan.h"
#include "../daemon/engine/scenario.h"

/*
 * Appends v to arr; clears *okp when v is NULL (a string that is not
 * UTF-8, or no memory), so nothing is dropped silently.
 */
/* Checks that p's arrays fit m, so indexing below is safe. */
static bool
fits(const struct model *m, const struct plan *p)
{
	size_t i, k, a;

	if (p->n_routes != m->n_demands || p->n_arcs != 2 * m->n_links)
		return false;
	for (i = 0; i < p->n_saturated; i++)
		if (p->saturated_links[i] >= m->n_links)
			return false;
	if (p->n_stages > PLAN_STAGES_MAX)
		return false;
	for (k = 0; k < p->n_routes; k++)
		for (i = 0; i < p->routes[k].n_paths; i++)
			for (a = 0; a < p->routes[k].paths[i].n_arcs; a++)
				if (p->routes[k].paths[i].arcs[a] >= p->n_arcs)
					return false;
	return true;
}

static const char *
objective_str(enum objective o)
{
	const char *w = objective_word(o);

	return w != NULL ? w : "unknown";
}

/*
 * Adds unplaced_demands and unplaced_bps to summary j, and a warnings array
 * when any demand was left out.  Clears *okp when jansson fails.
 */
static void
unplaced(json_t *j, const struct model *m, bool *okp)
{
	json_t *warn;
	char text[320];

	if (j == NULL)
		return;
	if (json_object_set_new(j, "unplaced_demands",
	    json_integer((json_int_t)m->n_unplaced)) != 0 ||
	    json_object_set_new(j, "unplaced_bps",
	    codec_num(m->unplaced_bps)) != 0) {
		*okp = false;
		return;
	}
	if (m->n_unplaced == 0)
		return;
	/* The matrix name is at most 128 bytes, so the sentence fits. */
	if (m->n_unplaced == 1)
		snprintf(text, sizeof(text), "1 demand of matrix \"%s\" names "
		    "a node not in the topology and is not planned",
		    m->policy.matrix != NULL ? m->policy.matrix : "");
	else
		snprintf(text, sizeof(text), "%zu demands of matrix \"%s\" "
		    "name nodes not in the topology and are not planned",
		    m->n_unplaced, m->policy.matrix != NULL ?
		    m->policy.matrix : "");
	warn = json_array();
	codec_append(warn, json_string(text), okp);
	if (json_object_set_new(j, "warnings", warn) != 0)
		*okp = false;
}

/*
 * The solver's own account of the plan: the congestion cost of the loads,
 * the formulation, its certified gap and bound, effort, and the traffic
 * moved relative to the previous plan (null when there was none).
 */
static void
solver_fields(json_t *j, const struct plan *p, bool *okp)
{
	const char *form = formulation_word(p->formulation);
	int iterations = p->iterations;
	size_t i;

	if (iterations == 0)
		for (i = 0; i < p->n_stages; i++)
			iterations += p->stages[i].iterations;
	if (json_object_set_new(j, "congestion", codec_num(p->congestion)) ||
	    json_object_set_new(j, "formulation", json_string(form != NULL ?
	    form : "unknown")) ||
	    json_object_set_new(j, "gap", codec_num(p->gap)) ||
	    json_object_set_new(j, "bound", codec_num(p->bound)) ||
	    json_object_set_new(j, "iterations", json_integer(iterations)) ||
	    json_object_set_new(j, "cg_rounds", json_integer(p->cg_rounds)) ||
	    json_object_set_new(j, "columns", json_integer((json_int_t)
	    p->columns)) ||
	    json_object_set_new(j, "warm", json_boolean(p->warm)) ||
	    json_object_set_new(j, "moved_bps", p->moved_bps >= 0 ?
	    codec_num(p->moved_bps) : json_null()))
		*okp = false;
}

static json_t *
summary(const struct model *m, const struct plan *p, int64_t revision,
    bool *okp)
{
	json_t *j, *byprio, *sat, *stages;
	char key[4];
	size_t i;

	if (p == NULL) {
		j = json_pack("{s:I, s:I, s:s, s:s, s:s?}", "revision",
		    (json_int_t)revision, "model_revision",
		    (json_int_t)m->revision, "status", "failed", "objective",
		    objective_str(m->policy.objective), "matrix",
		    m->policy.matrix);
		unplaced(j, m, okp);
		return j;
	}
	byprio = json_object();
	for (i = 0; i <= MODEL_PRIO_MAX; i++) {
		snprintf(key, sizeof(key), "%zu", i);
		if (json_object_set_new(byprio, key,
		    codec_num(p->unserved_by_prio_bps[i])) != 0)
			*okp = false;
	}
	sat = json_array();
	for (i = 0; i < p->n_saturated; i++)
		codec_append(sat,
		    json_string(m->links[p->saturated_links[i]].id), okp);
	stages = json_array();
	for (i = 0; i < p->n_stages; i++)
		codec_append(stages,
		    json_pack("{s:s, s:o, s:o, s:i, s:o}", "name",
		    p->stages[i].name, "objective",
		    codec_num(p->stages[i].objective), "lp_objective",
		    codec_num(p->stages[i].lp_objective), "iterations",
		    p->stages[i].iterations, "ms",
		    codec_num(p->stages[i].ms)), okp);
	j = json_pack("{s:I, s:I, s:s, s:s, s:s?, s:o, s:o, s:o, s:o, s:o, "
	    "s:o, s:o, s:o, s:o}",
	    "revision", (json_int_t)revision,
	    "model_revision", (json_int_t)p->model_revision,
	    "status", plan_status_str(p->status),
	    "objective", objective_str(p->objective),
	    "matrix", m->policy.matrix,
	    "max_utilization", codec_num(p->max_util),
	    "total_cost", codec_num(p->total_cost),
	    "demand_bps", codec_num(p->demand_bps),
	    "carried_bps", codec_num(p->carried_bps),
	    "unserved_bps", codec_num(p->unserved_bps),
	    "unserved_by_priority", byprio,
	    "solve_ms", codec_num(p->solve_ms),
	    "saturated_links", sat,
	    "stages", stages);
	solver_fields(j, p, okp);
	unplaced(j, m, okp);
	return j;
}

static int
cmp_price(const void *x, const void *y, void *arg)
{
	const struct plan *p = arg;
	double a = p->arcs[*(const size_t *)x].shadow_price;
	double b = p->arcs[*(const size_t *)y].shadow_price;

	return a < b ? 1 : a > b ? -1 : 0;
}

/*
 * Why traffic was left unserved: the saturated link directions of the
 * admission stages, largest shadow price first, and the demands no path
 * of up links joins (docs/api.md).
 */
static void
explain(json_t *j, const struct model *m, const struct plan *p, bool *okp)
{
	json_t *bn, *cut;
	const struct plan_arc *a;
	const struct link *l;
	size_t *arcs, n = 0, i, k, n_cut;
	double cut_bps = 0;
	bool *off;

	arcs = xcalloc(p->n_arcs + 1, sizeof(*arcs));
	for (i = 0; i < p->n_arcs; i++)
		if (p->arcs[i].saturated)
			arcs[n++] = i;
	qsort_r(arcs, n, sizeof(*arcs), cmp_price, (void *)p);
	bn = json_array();
	for (i = 0; i < n && i < CODEC_EXPLAIN_MAX; i++) {
		a = &p->arcs[arcs[i]];
		l = &m->links[arcs[i] / 2];
		codec_append(bn, json_pack("{s:s, s:s, s:s, s:o, s:o}",
		    "link", l->id,
		    "from", m->nodes[arcs[i] % 2 == 0 ? l->a : l->b].id,
		    "to", m->nodes[arcs[i] % 2 == 0 ? l->b : l->a].id,
		    "utilization", codec_num(a->util),
		    "shadow_price", codec_num(a->shadow_price)), okp);
	}
	free(arcs);
	off = xcalloc(m->n_demands + 1, sizeof(*off));
	n_cut = model_cut_off(m, off, &cut_bps);
	cut = json_array();
	for (k = 0, i = 0; k < m->n_demands && i < CODEC_EXPLAIN_MAX; k++)
		if (off[k]) {
			i++;
			codec_append(cut, json_pack("{s:s, s:s, s:i, s:o}",
			    "src", m->nodes[m->demands[k].src].id,
			    "dst", m->nodes[m->demands[k].dst].id,
			    "priority", m->demands[k].priority,
			    "rate_bps", codec_num(m->demands[k].rate_bps)),
			    okp);
		}
	free(off);
	if (json_object_set_new(j, "explain", json_pack("{s:o, s:o, s:o, "
	    "s:I}", "bottleneck", bn, "cut_off", cut, "cut_off_bps",
	    codec_num(cut_bps), "cut_off_total", (json_int_t)n_cut)) != 0)
		*okp = false;
}

json_t *
codec_plan_summary(const struct model *m, const struct plan *p,
    int64_t revision, bool *okp)
{
	json_t *j = summary(m, p, revision, okp);

	if (j != NULL && p != NULL && p->status == PLAN_PARTIAL)
		explain(j, m, p, okp);
	return j;
}

/* One path of demand d: rate, node ids from d's source, link ids. */
static json_t *
path_json(const struct model *m, const struct demand *d,
    const struct plan_path *pp, bool *okp)
{
	json_t *nodes, *links;
	const struct link *l;
	size_t i, at = d->src;

	nodes = json_array();
	links = json_array();
	codec_append(nodes, json_string(m->nodes[at].id), okp);
	for (i = 0; i < pp->n_arcs; i++) {
		l = &m->links[pp->arcs[i] / 2];
		at = pp->arcs[i] % 2 == 0 ? l->b : l->a;
		codec_append(nodes, json_string(m->nodes[at].id), okp);
		codec_append(links, json_string(l->id), okp);
	}
	return json_pack("{s:o, s:o, s:o}", "rate_bps", codec_num(pp->rate_bps),
	    "nodes", nodes, "links", links);
}

/* The entry of demand k in GET /v1/plan/routes. */
static json_t *
route_json(const struct model *m, const struct plan *p, size_t k, bool *okp)
{
	json_t *paths;
	const struct demand *d = &m->demands[k];
	const struct plan_route *pr = &p->routes[k];
	size_t i;

	paths = json_array();
	for (i = 0; i < pr->n_paths; i++)
		codec_append(paths, path_json(m, d, &pr->paths[i], okp), okp);
	return json_pack("{s:s, s:s, s:i, s:o, s:o, s:o, s:o}",
	    "src", m->nodes[d->src].id, "dst", m->nodes[d->dst].id,
	    "priority", d->priority, "rate_bps", codec_num(d->rate_bps),
	    "carried_bps", codec_num(pr->carried_bps), "unserved_bps",
	    codec_num(pr->unserved_bps), "paths", paths);
}

static json_t *
routes(const struct model *m, const struct plan *p, int64_t revision,
    bool *okp)
{
	json_t *arr;
	size_t k;

	arr = json_array();
	for (k = 0; p != NULL && k < p->n_routes; k++)
		codec_append(arr, route_json(m, p, k, okp), okp);
	return json_pack("{s:I, s:I, s:o}", "revision", (json_int_t)revision,
	    "model_revision", (json_int_t)(p != NULL ? p->model_revision :
	    m->revision), "routes", arr);
}

static json_t *
arc_json(const struct plan_arc *a)
{
	return json_pack("{s:o, s:o, s:o, s:o, s:b}", "load_bps",
	    codec_num(a->load_bps), "utilization", codec_num(a->util),
	    "headroom_bps", codec_num(a->headroom_bps), "shadow_price",
	    codec_num(a->shadow_price), "saturated", a->saturated);
}

/* The entry of link i in GET /v1/plan/loads. */
static json_t *
link_json(const struct model *m, const struct plan *p, size_t i)
{
	const struct link *l = &m->links[i];

	return json_pack("{s:s, s:s, s:s, s:s, s:o, s:o, s:o, s:o}",
	    "id", l->id, "a", m->nodes[l->a].id, "b", m->nodes[l->b].id,
	    "state", l->up ? "up" : "down",
	    "capacity_bps", codec_num(l->capacity_bps),
	    "te_metric", codec_num(l->te_metric),
	    "a_to_b", arc_json(&p->arcs[2 * i]),
	    "b_to_a", arc_json(&p->arcs[2 * i + 1]));
}

static json_t *
loads(const struct model *m, const struct plan *p, int64_t revision,
    bool *okp)
{
	json_t *arr;
	size_t i;

	arr = json_array();
	for (i = 0; p != NULL && i < m->n_links; i++)
		codec_append(arr, link_json(m, p, i), okp);
	return json_pack("{s:I, s:I, s:o, s:o}", "revision",
	    (json_int_t)revision, "model_revision", (json_int_t)(p != NULL ?
	    p->model_revision : m->revision), "links", arr,
	    "max_utilization", p != NULL ? codec_num(p->max_util) :
	    json_null());
}

int
codec_plan_render(const struct model *m, const struct plan *p,
    int64_t revision, char **summaryp, size_t *summary_lenp, char **routesp,
    size_t *routes_lenp, char **loadsp, size_t *loads_lenp)
{
	char *s = NULL, *rt = NULL, *ld = NULL;
	size_t slen = 0, rlen = 0, llen = 0;
	bool ok = true;
	int r;

	r = ERR_INTERNAL;
	*summaryp = NULL;
	*summary_lenp = 0;
	if (routesp != NULL) {
		*routesp = NULL;
		*routes_lenp = 0;
	}
	if (loadsp != NULL) {
		*loadsp = NULL;
		*loads_lenp = 0;
	}
	if (m == NULL || (p != NULL && !fits(m, p)))
		goto out;
	/*
	 * A json_pack() given a NULL "o" value fails and returns NULL, so
	 * any failure inside shows up as a NULL text here.
	 */
	if ((s = codec_dump(codec_plan_summary(m, p, revision, &ok),
	    &slen)) == NULL ||
	    (routesp != NULL && (rt = codec_dump(routes(m, p, revision, &ok),
	    &rlen)) == NULL) ||
	    (loadsp != NULL && (ld = codec_dump(loads(m, p, revision, &ok),
	    &llen)) == NULL) || !ok)
		goto out;
	*summaryp = s;
	*summary_lenp = slen;
	if (routesp != NULL) {
		*routesp = rt;
		*routes_lenp = rlen;
	}
	if (loadsp != NULL) {
		*loadsp = ld;
		*loads_lenp = llen;
	}
	s = rt = ld = NULL;
	r = 0;
out:
	free(s);
	free(rt);
	free(ld);
	return r;
}

/* ---- one entry at a time, for streamed lists (api/plan_list.c) ---- */

/*
 * Appends j's compact text (reals at 17 digits, as codec_dump()) to the
 * text at *bufp, growing it; drops the reference to j.
 */
static int
append_json(json_t *j, char **bufp, size_t *lenp, size_t *capp)
{
	size_t n, cap;
	int r = ERR_INTERNAL;

	if (j == NULL)
		return ERR_INTERNAL;
	n = json_dumpb(j, *bufp != NULL ? *bufp + *lenp : NULL,
	    *capp - *lenp, JSON_COMPACT | JSON_REAL_PRECISION(17) |
	    JSON_ENCODE_ANY);
	if (n == 0)
		goto out;
	if (n > *capp - *lenp) {
		cap = *capp == 0 ? 4096 : *capp;
		while (cap - *lenp < n)
			cap *= 2;
		*bufp = xreallocarray(*bufp, 1, cap);
		*capp = cap;
		if (json_dumpb(j, *bufp + *lenp, cap - *lenp, JSON_COMPACT |
		    JSON_REAL_PRECISION(17) | JSON_ENCODE_ANY) != n)
			goto out;
	}
	*lenp += n;
	r = 0;
out:
	json_decref(j);
	return r;
}

int
codec_plan_route_text(const struct model *m, const struct plan *p, size_t k,
    char **bufp, size_t *lenp, size_t *capp)
{
	const struct plan_route *pr;
	bool ok = true;
	size_t i, a;

	if (p == NULL || k >= p->n_routes || p->n_routes != m->n_demands ||
	    p->n_arcs != 2 * m->n_links)
		return ERR_INTERNAL;
	pr = &p->routes[k];
	for (i = 0; i < pr->n_paths; i++)
		for (a = 0; a < pr->paths[i].n_arcs; a++)
			if (pr->paths[i].arcs[a] >= p->n_arcs)
				return ERR_INTERNAL;
	return append_json(route_json(m, p, k, &ok), bufp, lenp, capp) != 0 ||
	    !ok ? ERR_INTERNAL : 0;
}

int
codec_plan_link_text(const struct model *m, const struct plan *p, size_t i,
    char **bufp, size_t *lenp, size_t *capp)
{
	if (p == NULL || i >= m->n_links || p->n_arcs != 2 * m->n_links)
		return ERR_INTERNAL;
	return append_json(link_json(m, p, i), bufp, lenp, capp);
}

int
codec_plan_num_text(double x, char **bufp, size_t *lenp, size_t *capp)
{
	return append_json(codec_num(x), bufp, lenp, capp);
}
