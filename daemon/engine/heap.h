/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A binary heap of node indices keyed by a distance array, for Dijkstra. */
#ifndef WEFT_ENGINE_HEAP_H
#define WEFT_ENGINE_HEAP_H

#include <stddef.h>

/*
 * The caller owns node[] and at[] (one entry per node each) and the dist[]
 * array the heap is keyed by.  To insert node v: node[n] = v, at[v] = n++,
 * then heap_up(h, at[v]); after lowering dist[v] of a node in the heap,
 * heap_up(h, at[v]) again.  at[v] is SIZE_MAX for a node not in the heap.
 */
struct heap {
	size_t *node;		/* borrowed: heap order */
	size_t *at;		/* borrowed: node -> place in node[], or
				   SIZE_MAX */
	size_t n;		/* nodes in the heap */
	const double *dist;	/* borrowed: the keys */
};

/* Restores the heap order upwards from place i. */
void heap_up(struct heap *h, size_t i);

/* Removes and returns the node of least dist; h->n must be > 0. */
size_t heap_pop(struct heap *h);

#endif /* WEFT_ENGINE_HEAP_H */
