/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Freeing plans and naming their status. */
#include <stdlib.h>

#include "plan.h"

const char *
plan_status_str(enum plan_status s)
{
	switch (s) {
	case PLAN_OPTIMAL:
		return "optimal";
	case PLAN_PARTIAL:
		return "partial";
	case PLAN_EMPTY:
		return "empty";
	}
	return "unknown";
}

void
plan_free(struct plan *p)
{
	size_t i, j;

	if (p == NULL)
		return;
	for (i = 0; i < p->n_routes; i++) {
		for (j = 0; j < p->routes[i].n_paths; j++)
			free(p->routes[i].paths[j].arcs);
		free(p->routes[i].paths);
	}
	free(p->routes);
	free(p->arcs);
	free(p->saturated_links);
	free(p);
}
