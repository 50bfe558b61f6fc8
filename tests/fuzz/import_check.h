/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What the import fuzz targets check of every network they read. */
#ifndef WEFT_TESTS_FUZZ_IMPORT_CHECK_H
#define WEFT_TESTS_FUZZ_IMPORT_CHECK_H

/*
 * An imported network is stored, then served as GET /v1/topology and its
 * links addressed as /v1/links/{id}; a client may PUT that topology back.
 * So whatever an importer accepts must read back through the JSON
 * decoder (api/codec_model.h), with the same ids and capacities.  A
 * broken promise aborts, which libFuzzer reports as a crash.
 */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../api/codec_model.h"
#include "../../daemon/base/err.h"
#include "../../daemon/engine/model.h"

#define CHECK(cond)	do {						\
	if (!(cond)) {							\
		fprintf(stderr, "fuzz: broken promise: %s (%s:%d)\n",	\
		    #cond, __FILE__, __LINE__);				\
		abort();						\
	}								\
} while (0)

/* Checks that m's topology survives the JSON encoder and decoder. */
static inline void
check_topology_json(const struct model *m)
{
	struct model *m2 = NULL;
	struct err e = { 0 };
	char *out;
	size_t len, i;
	int r;

	out = codec_topology_encode(m, &len);
	CHECK(out != NULL);
	r = codec_topology_decode(out, len, &m2, &e);
	if (r != 0)
		fprintf(stderr, "topology JSON re-read: %s: %s\n", e.where,
		    e.msg);
	CHECK(r == 0);
	CHECK(m2->n_nodes == m->n_nodes && m2->n_links == m->n_links);
	for (i = 0; i < m->n_nodes; i++)
		CHECK(strcmp(m2->nodes[i].id, m->nodes[i].id) == 0);
	for (i = 0; i < m->n_links; i++) {
		CHECK(strcmp(m2->links[i].id, m->links[i].id) == 0);
		CHECK(m2->links[i].capacity_bps == m->links[i].capacity_bps);
		CHECK(m2->links[i].te_metric == m->links[i].te_metric);
	}
	free(out);
	model_free(m2);
}

#endif /* WEFT_TESTS_FUZZ_IMPORT_CHECK_H */
