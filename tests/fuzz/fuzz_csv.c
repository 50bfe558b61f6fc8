/* SPDX-License-Identifier: GPL-3.0-or-later */
/* libFuzzer target: the CSV network importer (daemon/engine/csvnet.c). */

/*
 * DESIGN
 * The input is a POST /v1/import?format=csv body as the handler hands it
 * over (not NUL-terminated).  Besides the sanitizers, csvnet.h's promises
 * are checked: a model comes back exactly when the parser returns 0, and
 * csvnet_write() of an accepted network reads back through csvnet_parse()
 * to an equal network (ids, ends, capacities, metrics, states, demands).
 * An accepted network also reads back through the topology JSON
 * (import_check.h).
 */

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../daemon/engine/csvnet.h"
#include "import_check.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static void
check_csv_round_trip(const struct model *m)
{
	struct model *m2 = NULL;
	struct err e = { 0 };
	char *out = NULL;
	size_t len = 0, i;
	FILE *f;
	int r;

	CHECK((f = open_memstream(&out, &len)) != NULL);
	CHECK(csvnet_write(m, f) == 0);
	CHECK(fclose(f) == 0);
	r = csvnet_parse(out, len, &m2, &e);
	if (r != 0)
		fprintf(stderr, "CSV re-read: %s: %s\n", e.where, e.msg);
	CHECK(r == 0);
	CHECK(m2->n_nodes == m->n_nodes && m2->n_links == m->n_links &&
	    m2->n_demands == m->n_demands);
	for (i = 0; i < m->n_nodes; i++) {
		CHECK(strcmp(m2->nodes[i].id, m->nodes[i].id) == 0);
		CHECK((m2->nodes[i].name == NULL) ==
		    (m->nodes[i].name == NULL));
		CHECK(m->nodes[i].name == NULL ||
		    strcmp(m2->nodes[i].name, m->nodes[i].name) == 0);
		CHECK(m2->nodes[i].has_coords == m->nodes[i].has_coords);
		CHECK(!m->nodes[i].has_coords ||
		    (m2->nodes[i].lat == m->nodes[i].lat &&
		    m2->nodes[i].lon == m->nodes[i].lon));
	}
	for (i = 0; i < m->n_links; i++) {
		CHECK(strcmp(m2->links[i].id, m->links[i].id) == 0);
		CHECK(m2->links[i].a == m->links[i].a &&
		    m2->links[i].b == m->links[i].b);
		CHECK(m2->links[i].capacity_bps == m->links[i].capacity_bps);
		CHECK(m2->links[i].te_metric == m->links[i].te_metric);
		CHECK(m2->links[i].up == m->links[i].up);
	}
	for (i = 0; i < m->n_demands; i++) {
		CHECK(m2->demands[i].src == m->demands[i].src &&
		    m2->demands[i].dst == m->demands[i].dst);
		CHECK(m2->demands[i].rate_bps == m->demands[i].rate_bps);
		CHECK(m2->demands[i].priority == m->demands[i].priority);
	}
	free(out);
	model_free(m2);
}

int
LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	struct model *m = NULL;
	struct err e = { 0 };
	int r;

	r = csvnet_parse((const char *)data, size, &m, &e);
	CHECK((r == 0) == (m != NULL));
	if (m != NULL) {
		check_csv_round_trip(m);
		check_topology_json(m);
	}
	model_free(m);
	return 0;
}
