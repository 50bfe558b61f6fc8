/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Renders forwarding tables (GET /v1/plan/forwarding) as JSON. */

/*
 * DESIGN
 * Walks the table set once, in its (node, destination) order, keeping the
 * entries the filters allow; with a node filter only that node's range
 * of entries is visited.  Every index is checked against the model before
 * use, so tables that do not belong to the model give ERR_INTERNAL rather
 * than a wild read.  A jansson failure anywhere clears one flag, so nothing
 * is dropped silently.
 */

#include <math.h>
#include <stdbool.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "codec_fwd.h"
#include "codec_json.h"
#include "../daemon/base/err.h"
#include "../daemon/engine/fwd.h"
#include "../daemon/engine/model.h"

static json_t *
table(const struct model *m, const struct fwd *f, const struct fwd_entry *en,
    bool *okp)
{
	const struct fwd_hop *h = fwd_hops(f, en);
	json_t *hops;
	size_t j;

	hops = json_array();
	for (j = 0; j < en->n_hops; j++) {
		if (h[j].arc >= 2 * m->n_links || h[j].next >= m->n_nodes) {
			*okp = false;
			break;
		}
		codec_append(hops, json_pack("{s:s, s:s, s:o, s:o}",
		    "link", m->links[h[j].arc / 2].id,
		    "next", m->nodes[h[j].next].id,
		    "fraction", codec_num(h[j].frac),
		    "rate_bps", codec_num(h[j].rate_bps)), okp);
	}
	return json_pack("{s:s, s:s, s:o, s:o}", "node", m->nodes[en->node].id,
	    "dst", m->nodes[en->dst].id, "through_bps",
	    codec_num(en->through_bps), "next_hops", hops);
}

int
codec_fwd_render(const struct model *m, const struct fwd *f,
    int64_t revision, long node, long dst, char **textp, size_t *lenp)
{
	const struct fwd_entry *en;
	const struct fwd_loop *lp;
	json_t *j = NULL, *tables, *loops, *nodes;
	size_t i, k, first, n;
	bool ok = true;
	int r;

	r = ERR_INTERNAL;
	*textp = NULL;
	*lenp = 0;
	if (node >= (long)m->n_nodes || dst >= (long)m->n_nodes)
		goto out;
	tables = json_array();
	if (node >= 0) {
		first = fwd_node_entries(f, (size_t)node, &n);
	} else {
		first = 0;
		n = fwd_n_entries(f);
	}
	for (i = first; i < first + n; i++) {
		en = fwd_entry(f, i);
		if (en == NULL || en->node >= m->n_nodes ||
		    en->dst >= m->n_nodes) {
			ok = false;
			break;
		}
		if (dst >= 0 && en->dst != (size_t)dst)
			continue;
		codec_append(tables, table(m, f, en, &ok), &ok);
	}
	loops = json_array();
	for (i = 0; i < fwd_n_loops(f); i++) {
		lp = fwd_loop(f, i);
		if (lp->dst >= m->n_nodes) {
			ok = false;
			break;
		}
		if (dst >= 0 && lp->dst != (size_t)dst)
			continue;
		nodes = json_array();
		for (k = 0; k < lp->n_nodes; k++) {
			if (lp->nodes[k] >= m->n_nodes) {
				ok = false;
				break;
			}
			codec_append(nodes,
			    json_string(m->nodes[lp->nodes[k]].id), &ok);
		}
		codec_append(loops, json_pack("{s:s, s:o}", "dst",
		    m->nodes[lp->dst].id, "nodes", nodes), &ok);
	}
	j = json_pack("{s:I, s:I, s:s?, s:s?, s:o, s:o}",
	    "revision", (json_int_t)revision,
	    "model_revision", (json_int_t)m->revision,
	    "node", node >= 0 ? m->nodes[node].id : NULL,
	    "dst", dst >= 0 ? m->nodes[dst].id : NULL,
	    "tables", tables, "loops", loops);
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
