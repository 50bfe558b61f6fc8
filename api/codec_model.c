/* SPDX-License-Identifier: GPL-3.0-or-later */
/* JSON <-> topology, traffic matrix, policy, link patch; strictly checked. */

/*
 * DESIGN
 * Decoding runs in three steps: a scan of the raw text for nesting depth
 * (so jansson's recursive parser never goes deep), json_loadb() with
 * duplicate keys rejected, then a walk of the tree that checks every
 * member and builds the engine struct.  Checks that need the whole input
 * (duplicate ids, a link's ends existing) are made here too, so the error
 * can name the member; the engine's own checks (model_add_*(),
 * matrix_check()) run after them as a second line.  The tree is dropped
 * before returning.  Paths in errors are built with snprintf into
 * ERR_WHERE_MAX bytes, so a long key is cut, never overflows.
 */

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "codec_model.h"
#include "codec_strict.h"
#include "codec_json.h"
#include "../daemon/base/err.h"
#include "../daemon/base/xalloc.h"
#include "../daemon/engine/model.h"
#include "../storage/db.h"

/* ---- parsing and member access ------------------------------------ */

/* Gets an id member: a string that passes codec_check_id(). */
static int
get_id(json_t *obj, const char *key, const char *base, const char **sp,
    struct err *e)
{
	char w[ERR_WHERE_MAX];
	int r;

	if ((r = codec_get_str(obj, key, base, true, false, sp, e)) != 0)
		return r;
	return codec_check_id(*sp, codec_path(w, sizeof(w), base, key), e);
}

/* Gets array member key into *ap, at most max elements. */
static int
get_array(json_t *obj, const char *key, size_t max, json_t **ap,
    struct err *e)
{
	json_t *v = json_object_get(obj, key);

	*ap = NULL;
	if (v == NULL)
		return err_set(e, ERR_INVALID, key, "required field is "
		    "missing");
	if (!json_is_array(v))
		return err_set(e, ERR_INVALID, key, "must be an array");
	if (json_array_size(v) > max)
		return err_set(e, ERR_TOOBIG, key, "%zu elements, more than "
		    "the limit of %zu", json_array_size(v), max);
	*ap = v;
	return 0;
}

/* Checks that element i of array key is an object; writes its path. */
static int
element(json_t *arr, const char *key, size_t i, char *w, size_t n,
    json_t **vp, struct err *e)
{
	snprintf(w, n, "%s[%zu]", key, i);
	*vp = json_array_get(arr, i);
	if (!json_is_object(*vp))
		return err_set(e, ERR_INVALID, w, "must be an object");
	return 0;
}

bool
codec_matrix_name_ok(const char *name)
{
	size_t n;

	if (name == NULL)
		return false;
	n = strspn(name, "abcdefghijklmnopqrstuvwxyz"
	    "ABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789._-");
	return n > 0 && n <= CODEC_MATRIX_NAME_MAX && name[n] == '\0';
}

/* ---- decoders ---------------------------------------------------- */

static const char *const topo_keys[] = { "nodes", "links", NULL };
static const char *const node_keys[] = { "id", "name", "lat", "lon", NULL };
static const char *const link_keys[] = { "id", "a", "b", "capacity_bps",
    "te_metric", "state", "srlgs", NULL };
static const char *const matrix_keys[] = { "name", "demands", NULL };
static const char *const demand_keys[] = { "src", "dst", "rate_bps",
    "priority", NULL };
static const char *const policy_keys[] = { "objective", "headroom",
    "matrix", "balance_tolerance", "formulation", "gap_target",
    "keep_paths", "keep_paths_tolerance", NULL };
static const char *const patch_keys[] = { "state", "capacity_bps",
    "te_metric", "srlgs", NULL };

/* Reads a "state" member: "up" or "down"; absent leaves *upp alone. */
static int
get_state(json_t *obj, const char *base, bool *upp, bool *hasp,
    struct err *e)
{
	const char *s;
	char w[ERR_WHERE_MAX];
	int r;

	*hasp = false;
	if ((r = codec_get_str(obj, "state", base, false, false, &s, e)) != 0)
		return r;
	if (s == NULL)
		return 0;
	if (strcmp(s, "up") != 0 && strcmp(s, "down") != 0)
		return err_set(e, ERR_INVALID, codec_path(w, sizeof(w), base,
		    "state"), "must be \"up\" or \"down\"");
	*upp = strcmp(s, "up") == 0;
	*hasp = true;
	return 0;
}

/*
 * Reads an "srlgs" member: an array of at most MODEL_SRLG_MAX distinct
 * integers 0..UINT32_MAX, into s (room for MODEL_SRLG_MAX) in the given
 * order.  Absent: *np 0, *hasp false.  A repeat is refused rather than
 * merged (nothing is repaired); over the limit is ERR_INVALID, not
 * ERR_TOOBIG, since the limit belongs to the model, not to the request.
 */
static int
get_srlgs(json_t *obj, const char *base, uint32_t *s, size_t *np,
    bool *hasp, struct err *e)
{
	json_t *v = json_object_get(obj, "srlgs"), *x;
	char w[ERR_WHERE_MAX], wi[ERR_WHERE_MAX];
	json_int_t g;
	size_t i, j;

	*np = 0;
	*hasp = false;
	if (v == NULL)
		return 0;
	codec_path(w, sizeof(w), base, "srlgs");
	if (!json_is_array(v))
		return err_set(e, ERR_INVALID, w, "must be an array of SRLG "
		    "numbers");
	if (json_array_size(v) > MODEL_SRLG_MAX)
		return err_set(e, ERR_INVALID, w, "%zu SRLGs; a link is in at "
		    "most %d", json_array_size(v), MODEL_SRLG_MAX);
	json_array_foreach(v, i, x) {
		snprintf(wi, sizeof(wi), "%.*s[%zu]", ERR_WHERE_MAX - 24, w,
		    i);
		if (!json_is_integer(x) || (g = json_integer_value(x)) < 0 ||
		    g > UINT32_MAX)
			return err_set(e, ERR_INVALID, wi, "must be an integer "
			    "from 0 to %lu", (unsigned long)UINT32_MAX);
		for (j = 0; j < i; j++)
			if (s[j] == (uint32_t)g)
				return err_set(e, ERR_INVALID, wi, "SRLG %lld "
				    "is listed twice", (long long)g);
		s[i] = (uint32_t)g;
	}
	*np = json_array_size(v);
	*hasp = true;
	return 0;
}

static int
decode_node(struct model *m, json_t *v, const char *base, struct err *e)
{
	const char *id, *name;
	char w[ERR_WHERE_MAX];
	double lat = 0, lon = 0;
	bool has_lat, has_lon;
	size_t idx;
	int r;

	if ((r = codec_check_keys(v, node_keys, base, e)) != 0 ||
	    (r = get_id(v, "id", base, &id, e)) != 0 ||
	    (r = codec_get_str(v, "name", base, false, true, &name, e)) != 0 ||
	    (r = codec_get_num(v, "lat", base, false, -90, false, 90, &lat,
	    &has_lat, e)) != 0 ||
	    (r = codec_get_num(v, "lon", base, false, -180, false, 180, &lon,
	    &has_lon, e)) != 0)
		return r;
	if (name != NULL && strlen(name) > CODEC_TEXT_MAX)
		return err_set(e, ERR_INVALID, codec_path(w, sizeof(w), base,
		    "name"), "longer than %d bytes", CODEC_TEXT_MAX);
	if (has_lat != has_lon)
		return err_set(e, ERR_INVALID, codec_path(w, sizeof(w), base,
		    has_lat ? "lon" : "lat"), "lat and lon come together");
	if (model_find_node(m, id) >= 0)
		return err_set(e, ERR_INVALID, codec_path(w, sizeof(w), base, "id"),
		    "duplicate node id \"%s\"", id);
	if ((r = model_add_node(m, id, name, &idx, base, e)) != 0)
		return r;
	m->nodes[idx].lat = lat;
	m->nodes[idx].lon = lon;
	m->nodes[idx].has_coords = has_lat;
	return 0;
}

static int
decode_link(struct model *m, json_t *v, const char *base, struct err *e)
{
	const char *id, *a, *b;
	char w[ERR_WHERE_MAX];
	uint32_t srlgs[MODEL_SRLG_MAX];
	double cap = 0, metric = 0;
	bool up = true, has_state, has_srlgs;
	size_t n_srlgs;
	int r;

	if ((r = codec_check_keys(v, link_keys, base, e)) != 0 ||
	    (r = get_id(v, "id", base, &id, e)) != 0 ||
	    (r = get_id(v, "a", base, &a, e)) != 0 ||
	    (r = get_id(v, "b", base, &b, e)) != 0 ||
	    (r = codec_get_num(v, "capacity_bps", base, true, 0, true,
	    MODEL_RATE_MAX, &cap, NULL, e)) != 0 ||
	    (r = codec_get_num(v, "te_metric", base, true, 0, true,
	    MODEL_METRIC_MAX, &metric, NULL, e)) != 0 ||
	    (r = get_state(v, base, &up, &has_state, e)) != 0 ||
	    (r = get_srlgs(v, base, srlgs, &n_srlgs, &has_srlgs, e)) != 0)
		return r;
	if (model_find_link(m, id) >= 0)
		return err_set(e, ERR_INVALID, codec_path(w, sizeof(w), base, "id"),
		    "duplicate link id \"%s\"", id);
	if (model_find_node(m, a) < 0)
		return err_set(e, ERR_INVALID, codec_path(w, sizeof(w), base, "a"),
		    "unknown node \"%s\"", a);
	if (model_find_node(m, b) < 0)
		return err_set(e, ERR_INVALID, codec_path(w, sizeof(w), base, "b"),
		    "unknown node \"%s\"", b);
	if (strcmp(a, b) == 0)
		return err_set(e, ERR_INVALID, codec_path(w, sizeof(w), base, "b"),
		    "a link cannot join node \"%s\" to itself", a);
	if ((r = model_add_link(m, id, a, b, cap, metric, up, base, e)) != 0)
		return r;
	return model_set_link_srlgs(m, m->n_links - 1, srlgs, n_srlgs, base,
	    e);
}

int
codec_topology_decode(const char *text, size_t len, struct model **mp,
    struct err *e)
{
	json_t *j = NULL, *nodes, *links, *v;
	struct model *m = NULL;
	char w[ERR_WHERE_MAX];
	size_t i;
	int r;

	r = ERR_INTERNAL;
	*mp = NULL;
	if ((r = codec_parse_object(text, len, &j, e)) != 0 ||
	    (r = codec_check_keys(j, topo_keys, "", e)) != 0 ||
	    (r = get_array(j, "nodes", CODEC_NODES_MAX, &nodes, e)) != 0 ||
	    (r = get_array(j, "links", CODEC_LINKS_MAX, &links, e)) != 0)
		goto out;
	m = model_new();
	json_array_foreach(nodes, i, v) {
		if ((r = element(nodes, "nodes", i, w, sizeof(w), &v, e)) != 0 ||
		    (r = decode_node(m, v, w, e)) != 0)
			goto out;
	}
	json_array_foreach(links, i, v) {
		if ((r = element(links, "links", i, w, sizeof(w), &v, e)) != 0 ||
		    (r = decode_link(m, v, w, e)) != 0)
			goto out;
	}
	*mp = m;
	m = NULL;
	r = 0;
out:
	model_free(m);
	json_decref(j);
	return r;
}

int
codec_matrix_decode(const char *text, size_t len, const char *name,
    struct matrix **mxp, struct err *e)
{
	json_t *j = NULL, *demands, *v, *pv;
	struct matrix *mx = NULL;
	const char *src, *dst, *jname;
	char w[ERR_WHERE_MAX], wf[ERR_WHERE_MAX];
	double rate = 0;
	json_int_t prio;
	size_t i;
	int r;

	r = ERR_INTERNAL;
	*mxp = NULL;
	if ((r = codec_parse_object(text, len, &j, e)) != 0 ||
	    (r = codec_check_keys(j, matrix_keys, "", e)) != 0 ||
	    (r = codec_get_str(j, "name", "", false, true, &jname, e)) != 0 ||
	    (r = get_array(j, "demands", CODEC_DEMANDS_MAX, &demands,
	    e)) != 0)
		goto out;
	if (jname != NULL && (name == NULL || strcmp(jname, name) != 0)) {
		r = err_set(e, ERR_INVALID, "name", "\"%s\" differs from the "
		    "matrix name in the path", jname);
		goto out;
	}
	mx = matrix_new(name);
	json_array_foreach(demands, i, v) {
		if ((r = element(demands, "demands", i, w, sizeof(w), &v,
		    e)) != 0 ||
		    (r = codec_check_keys(v, demand_keys, w, e)) != 0 ||
		    (r = get_id(v, "src", w, &src, e)) != 0 ||
		    (r = get_id(v, "dst", w, &dst, e)) != 0 ||
		    (r = codec_get_num(v, "rate_bps", w, true, 0, false,
		    MODEL_RATE_MAX, &rate, NULL, e)) != 0)
			goto out;
		prio = 0;
		pv = json_object_get(v, "priority");
		if (pv != NULL && (!json_is_integer(pv) ||
		    (prio = json_integer_value(pv)) < 0 ||
		    prio > MODEL_PRIO_MAX)) {
			r = err_set(e, ERR_INVALID, codec_path(wf, sizeof(wf), w,
			    "priority"), "must be an integer from 0 to %d",
			    MODEL_PRIO_MAX);
			goto out;
		}
		if (strcmp(src, dst) == 0) {
			r = err_set(e, ERR_INVALID, codec_path(wf, sizeof(wf), w,
			    "dst"), "a demand cannot run from node \"%s\" to "
			    "itself", src);
			goto out;
		}
		matrix_add(mx, src, dst, rate, (int)prio);
	}
	if ((r = matrix_check(mx, e)) != 0)
		goto out;
	*mxp = mx;
	mx = NULL;
	r = 0;
out:
	matrix_free(mx);
	json_decref(j);
	return r;
}

int
codec_policy_decode(const char *text, size_t len, struct policy *p,
    struct err *e)
{
	json_t *j = NULL, *v;
	const char *obj, *mname, *form = NULL;
	struct policy np;
	int r;

	r = ERR_INTERNAL;
	policy_default(&np);
	if ((r = codec_parse_object(text, len, &j, e)) != 0 ||
	    (r = codec_check_keys(j, policy_keys, "", e)) != 0 ||
	    (r = codec_get_str(j, "objective", "", true, false, &obj, e)) != 0 ||
	    (r = codec_get_num(j, "headroom", "", true, 0, true, 1, &np.headroom,
	    NULL, e)) != 0 ||
	    (r = codec_get_num(j, "balance_tolerance", "", false, 0, false, 1,
	    &np.balance_tol, NULL, e)) != 0)
		goto out;
	if (objective_parse(obj, &np.objective) != 0) {
		r = err_set(e, ERR_INVALID, "objective", "must be \"cost\", "
		    "\"balance\" or \"congestion\"");
		goto out;
	}
	if ((r = codec_get_str(j, "formulation", "", false, false, &form, e)) != 0 ||
	    (r = codec_get_num(j, "gap_target", "", false, 0, false, 0.5,
	    &np.gap_target, NULL, e)) != 0 ||
	    (r = codec_get_num(j, "keep_paths_tolerance", "", false, 0, false, 0.5,
	    &np.keep_paths_tol, NULL, e)) != 0)
		goto out;
	if (form != NULL && formulation_parse(form, &np.formulation) != 0) {
		r = err_set(e, ERR_INVALID, "formulation", "must be \"path\" "
		    "(column generation) or \"arc\" (node-arc)");
		goto out;
	}
	if ((v = json_object_get(j, "keep_paths")) != NULL) {
		if (!json_is_boolean(v)) {
			r = err_set(e, ERR_INVALID, "keep_paths",
			    "must be true or false");
			goto out;
		}
		np.keep_paths = json_is_true(v);
	}
	if (json_object_get(j, "matrix") == NULL) {
		r = err_set(e, ERR_INVALID, "matrix", "required field is "
		    "missing (null for none)");
		goto out;
	}
	if ((r = codec_get_str(j, "matrix", "", false, true, &mname, e)) != 0)
		goto out;
	if (mname != NULL && !codec_matrix_name_ok(mname)) {
		r = err_set(e, ERR_INVALID, "matrix", "a matrix name is 1 to "
		    "%d characters of A-Z a-z 0-9 . _ -",
		    CODEC_MATRIX_NAME_MAX);
		goto out;
	}
	np.matrix = mname != NULL ? xstrdup(mname) : NULL;
	*p = np;
	r = 0;
out:
	json_decref(j);
	return r;
}

int
codec_link_patch_decode(const char *text, size_t len, struct link_patch *lp,
    struct err *e)
{
	json_t *j = NULL;
	struct link_patch np;
	int r;

	r = ERR_INTERNAL;
	memset(&np, 0, sizeof(np));
	if ((r = codec_parse_object(text, len, &j, e)) != 0 ||
	    (r = codec_check_keys(j, patch_keys, "", e)) != 0 ||
	    (r = get_state(j, "", &np.up, &np.has_up, e)) != 0 ||
	    (r = codec_get_num(j, "capacity_bps", "", false, 0, true,
	    MODEL_RATE_MAX, &np.capacity_bps, &np.has_capacity, e)) != 0 ||
	    (r = codec_get_num(j, "te_metric", "", false, 0, true,
	    MODEL_METRIC_MAX, &np.te_metric, &np.has_metric, e)) != 0 ||
	    (r = get_srlgs(j, "", np.srlgs, &np.n_srlgs, &np.has_srlgs,
	    e)) != 0)
		goto out;
	if (!np.has_up && !np.has_capacity && !np.has_metric &&
	    !np.has_srlgs) {
		r = err_set(e, ERR_INVALID, "", "a patch sets at least one of "
		    "state, capacity_bps, te_metric, srlgs");
		goto out;
	}
	*lp = np;
	r = 0;
out:
	json_decref(j);
	return r;
}

/* ---- encoders ---------------------------------------------------- */

/* One link, its SRLGs always (ascending, as the model keeps them). */
static json_t *
link_json(const struct model *m, size_t i)
{
	const struct link *l = &m->links[i];
	json_t *j, *srlgs;
	bool ok = true;
	size_t k;

	srlgs = json_array();
	for (k = 0; srlgs != NULL && k < l->n_srlgs; k++)
		codec_append(srlgs, json_integer((json_int_t)l->srlgs[k]), &ok);
	/* "o" steals srlgs, also when the pack fails. */
	j = json_pack("{s:s, s:s, s:s, s:o, s:o, s:s, s:o}", "id", l->id,
	    "a", m->nodes[l->a].id, "b", m->nodes[l->b].id,
	    "capacity_bps", codec_num(l->capacity_bps), "te_metric",
	    codec_num(l->te_metric), "state", l->up ? "up" : "down",
	    "srlgs", srlgs);
	if (!ok) {
		json_decref(j);
		return NULL;
	}
	return j;
}

char *
codec_topology_encode(const struct model *m, size_t *lenp)
{
	json_t *j, *nodes, *links, *n;
	size_t i;

	nodes = json_array();
	links = json_array();
	j = json_pack("{s:o, s:o}", "nodes", nodes, "links", links);
	if (j == NULL)
		return NULL;
	for (i = 0; i < m->n_nodes; i++) {
		n = json_pack("{s:s}", "id", m->nodes[i].id);
		if (n == NULL)
			goto fail;
		if (m->nodes[i].name != NULL)
			json_object_set_new(n, "name",
			    json_string(m->nodes[i].name));
		if (m->nodes[i].has_coords) {
			json_object_set_new(n, "lat",
			    codec_num(m->nodes[i].lat));
			json_object_set_new(n, "lon",
			    codec_num(m->nodes[i].lon));
		}
		json_array_append_new(nodes, n);
	}
	for (i = 0; i < m->n_links; i++)
		if (json_array_append_new(links, link_json(m, i)) != 0)
			goto fail;
	return codec_dump(j, lenp);
fail:
	json_decref(j);
	*lenp = 0;
	return NULL;
}

char *
codec_matrix_encode(const struct matrix *mx, size_t *lenp)
{
	json_t *j, *demands;
	size_t i;

	demands = json_array();
	j = json_pack("{s:s?, s:o}", "name", mx->name, "demands", demands);
	if (j == NULL)
		return NULL;
	for (i = 0; i < mx->n; i++) {
		if (json_array_append_new(demands, json_pack(
		    "{s:s, s:s, s:o, s:i}", "src", mx->entries[i].src, "dst",
		    mx->entries[i].dst, "rate_bps",
		    codec_num(mx->entries[i].rate_bps), "priority",
		    mx->entries[i].priority)) != 0) {
			json_decref(j);
			*lenp = 0;
			return NULL;
		}
	}
	return codec_dump(j, lenp);
}

char *
codec_matrices_encode(const struct db_name *names, size_t n, size_t *lenp)
{
	json_t *j, *arr;
	size_t i;

	arr = json_array();
	j = json_pack("{s:o}", "matrices", arr);
	if (j == NULL)
		return NULL;
	for (i = 0; i < n; i++) {
		if (json_array_append_new(arr, json_pack("{s:s, s:I, s:o}",
		    "name", names[i].name, "demands",
		    (json_int_t)names[i].n_demands, "total_bps",
		    codec_num(names[i].total_bps))) != 0) {
			json_decref(j);
			*lenp = 0;
			return NULL;
		}
	}
	return codec_dump(j, lenp);
}

char *
codec_policy_encode(const struct policy *p, size_t *lenp)
{
	return codec_dump(json_pack("{s:s, s:o, s:s?, s:o, s:s, s:o, s:b, "
	    "s:o}", "objective", objective_word(p->objective), "headroom",
	    codec_num(p->headroom), "matrix", p->matrix, "balance_tolerance",
	    codec_num(p->balance_tol), "formulation",
	    formulation_word(p->formulation), "gap_target",
	    codec_num(p->gap_target), "keep_paths", p->keep_paths,
	    "keep_paths_tolerance", codec_num(p->keep_paths_tol)), lenp);
}

char *
codec_link_encode(const struct model *m, size_t i, size_t *lenp)
{
	return codec_dump(link_json(m, i), lenp);
}
