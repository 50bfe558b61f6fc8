/* SPDX-License-Identifier: GPL-3.0-or-later */
/* libFuzzer target: the SNDlib importer (daemon/engine/sndlib.c). */

/*
 * DESIGN
 * The input is a POST /v1/import?format=sndlib body as the handler hands
 * it over (not NUL-terminated).  Besides the sanitizers: a model comes
 * back exactly when the parser returns 0, and an accepted network reads
 * back through the topology JSON (import_check.h).
 */

#include <stdint.h>
#include <stdlib.h>

#include "../../daemon/engine/sndlib.h"
#include "import_check.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int
LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	struct sndlib_info info;
	struct model *m = NULL;
	struct err e = { 0 };
	int r;

	r = sndlib_parse_info((const char *)data, size, &m, &info, &e);
	CHECK((r == 0) == (m != NULL));
	CHECK(r == 0 || (r == ERR_INVALID && e.code == ERR_INVALID));
	if (m != NULL)
		check_topology_json(m);
	model_free(m);
	return 0;
}
