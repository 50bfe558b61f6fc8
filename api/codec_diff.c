/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Renders the difference of two plans (GET /v1/plan/diff) as JSON. */

/*
 * DESIGN
 * One entry per demand the diff lists (changed, added or removed), with
 * the demand's key (src, dst, priority, occurrence) and each side's
 * carried rate and paths as link-id lists; a side the demand is missing
 * from is null.  Indices from the diff are checked against the models
 * before use.  Runs on the requesting HTTP thread.
 */

#include <math.h>
#include <stdbool.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "codec_diff.h"
#include "codec_json.h"
#include "../daemon/base/err.h"
#include "../daemon/engine/model.h"
#include "../daemon/engine/plan.h"
#include "../daemon/engine/plandiff.h"

/* One side of a demand: carried rate and paths, or null when k < 0. */
static json_t *
side(const struct model *m, const struct plan *p, long k, bool *okp)
{
	const struct plan_route *rt;
	const struct plan_path *pp;
	json_t *paths, *links;
	size_t i, a;

	if (k < 0)
		return json_null();
	rt = &p->routes[k];
	paths = json_array();
	for (i = 0; i < rt->n_paths; i++) {
		pp = &rt->paths[i];
		links = json_array();
		for (a = 0; a < pp->n_arcs; a++)
			codec_append(links,
			    json_string(m->links[pp->arcs[a] / 2].id),
			    okp);
		codec_append(paths, json_pack("{s:o, s:o}", "rate_bps",
		    codec_num(pp->rate_bps), "links", links), okp);
	}
	return json_pack("{s:o, s:o, s:o}", "rate_bps",
	    codec_num(m->demands[k].rate_bps), "carried_bps",
	    codec_num(rt->carried_bps), "paths", paths);
}

static const char *
kind_str(enum plandiff_kind k)
{
	switch (k) {
	case PLANDIFF_ADDED:
		return "added";
	case PLANDIFF_REMOVED:
		return "removed";
	default:
		return "changed";
	}
}

static bool
fits(const struct model *m, const struct plan *p, long k)
{
	size_t i, a;

	if (k < 0)
		return true;
	if ((size_t)k >= m->n_demands || (size_t)k >= p->n_routes)
		return false;
	for (i = 0; i < p->routes[k].n_paths; i++)
		for (a = 0; a < p->routes[k].paths[i].n_arcs; a++)
			if (p->routes[k].paths[i].arcs[a] >= 2 * m->n_links)
				return false;
	return true;
}

int
codec_diff_render(const struct model *old_m, const struct plan *old_p,
    int64_t from, const struct model *new_m, const struct plan *new_p,
    int64_t to, const struct plandiff *d, char **textp, size_t *lenp)
{
	const struct plandiff_demand *pd;
	const struct model *m;
	const struct demand *dm;
	json_t *j = NULL, *changes;
	size_t i;
	bool ok = true;
	int r;

	r = ERR_INTERNAL;
	*textp = NULL;
	*lenp = 0;
	changes = json_array();
	for (i = 0; i < d->n_demands; i++) {
		pd = &d->demands[i];
		if (!fits(old_m, old_p, pd->old_k) ||
		    !fits(new_m, new_p, pd->new_k) ||
		    (pd->old_k < 0 && pd->new_k < 0)) {
			ok = false;
			break;
		}
		m = pd->new_k >= 0 ? new_m : old_m;
		dm = &m->demands[pd->new_k >= 0 ? pd->new_k : pd->old_k];
		codec_append(changes,
		    json_pack("{s:s, s:s, s:s, s:i, s:I, s:o, s:o, "
		    "s:o}", "change", kind_str(pd->kind),
		    "src", m->nodes[dm->src].id, "dst", m->nodes[dm->dst].id,
		    "priority", dm->priority,
		    "occurrence", (json_int_t)pd->occurrence,
		    "moved_bps", codec_num(pd->moved_bps),
		    "from", side(old_m, old_p, pd->old_k, &ok),
		    "to", side(new_m, new_p, pd->new_k, &ok)), &ok);
	}
	j = json_pack("{s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:o, s:o, "
	    "s:o, s:o, s:o}",
	    "from", (json_int_t)from, "to", (json_int_t)to,
	    "from_model_revision", (json_int_t)old_m->revision,
	    "to_model_revision", (json_int_t)new_m->revision,
	    "demands_compared", (json_int_t)d->n_compared,
	    "demands_changed", (json_int_t)d->n_changed,
	    "demands_added", (json_int_t)d->n_added,
	    "demands_removed", (json_int_t)d->n_removed,
	    "moved_bps", codec_num(d->moved_bps),
	    "from_carried_bps", codec_num(d->old_carried_bps),
	    "to_carried_bps", codec_num(d->new_carried_bps),
	    "moved_share", codec_num(d->moved_share),
	    "changes", changes);
	if (j == NULL || !ok) {
		json_decref(j);
		goto out;
	}
	if ((*textp = codec_dump(j, lenp)) == NULL)
		goto out;
	r = 0;
out:
	return r;
}
