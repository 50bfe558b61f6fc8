/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A binary heap of node indices keyed by a distance array, for Dijkstra. */
#include <stdint.h>

#include "heap.h"

static void
heap_swap(struct heap *h, size_t i, size_t j)
{
	size_t t = h->node[i];

	h->node[i] = h->node[j];
	h->node[j] = t;
	h->at[h->node[i]] = i;
	h->at[h->node[j]] = j;
}

void
heap_up(struct heap *h, size_t i)
{
	while (i > 0 && h->dist[h->node[(i - 1) / 2]] > h->dist[h->node[i]]) {
		heap_swap(h, i, (i - 1) / 2);
		i = (i - 1) / 2;
	}
}

size_t
heap_pop(struct heap *h)
{
	size_t top = h->node[0], i = 0, c;

	heap_swap(h, 0, --h->n);
	h->at[top] = SIZE_MAX;
	for (;;) {
		c = 2 * i + 1;
		if (c >= h->n)
			break;
		if (c + 1 < h->n &&
		    h->dist[h->node[c + 1]] < h->dist[h->node[c]])
			c++;
		if (h->dist[h->node[c]] >= h->dist[h->node[i]])
			break;
		heap_swap(h, i, c);
		i = c;
	}
	return top;
}
