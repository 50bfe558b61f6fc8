/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Per-node forwarding tables derived from a plan's path flows. */
#ifndef WEFT_ENGINE_FWD_H
#define WEFT_ENGINE_FWD_H

/*
 * DESIGN
 * A plan routes each demand over explicit paths.  A hop-by-hop router with
 * weighted splitting knows only its destination: at node v, traffic
 * towards t leaves over arc a with a fixed fraction.  fwd_build() derives
 * those fractions by summing, per destination t, the rates of every path
 * towards t (whatever its source) on each arc: f_t(a).  The table entry
 * (v, t) lists the arcs leaving v with f_t(a) > 0; each hop's fraction is
 * f_t(a) / sum of f_t over v's outgoing arcs, so the fractions of an entry
 * sum to one (up to rounding).  Only (node, destination) pairs that carry
 * traffic have an entry; the destination itself has none.
 *
 * Loops.  Aggregating paths of different sources per destination can in
 * principle give a cycle (source s1's path crosses u->v and s2's crosses
 * v->u, both towards t).  A cost-minimal plan has none: swapping the two
 * paths' tails removes both arcs, lowers cost and loads, so with positive
 * TE metrics an optimum never holds such a pair, but rounding can leave
 * tiny ones.  The fractions of a cyclic destination still describe the
 * planned flow, but a router programmed with them would send some packets
 * round the cycle.  fwd_build() therefore checks every destination with
 * Kahn's algorithm and records each cyclic one with one of its cycles
 * (fwd_n_loops(), fwd_loop()); callers must show them.  Nothing is
 * dropped or rebalanced to hide a loop.
 *
 * A struct fwd is immutable once built and borrows nothing: it may be
 * read by any number of threads.  Memory: one entry per (node,
 * destination) with traffic and one hop per (arc, destination) with flow.
 */

#include <stdbool.h>
#include <stddef.h>

struct err;
struct model;
struct plan;
struct fwd;

struct fwd_hop {
	size_t arc;		/* plan arc index: 2*link (a->b), 2*link+1 */
	size_t next;		/* node index at the arc's far end */
	double frac;		/* share of the entry's traffic, (0, 1] */
	double rate_bps;	/* f_t(arc): planned traffic to dst on it */
};

struct fwd_entry {
	size_t node;		/* node index the table belongs to */
	size_t dst;		/* destination node index */
	double through_bps;	/* traffic to dst leaving node: sum of hops */
	size_t hop0;		/* private: first hop in the table's array */
	size_t n_hops;		/* hops, ascending arc index */
};

/* A destination whose per-destination flow holds a cycle. */
struct fwd_loop {
	size_t dst;		/* destination node index */
	size_t *nodes;		/* owned: one cycle, first node repeated last */
	size_t n_nodes;
};

/*
 * Builds the forwarding tables of plan p solved from model m.  Returns 0
 * with a new table set in *fp (free it with fwd_free), or ERR_INVALID when
 * p does not fit m (route or arc counts, arc indices, a path that does not
 * run from its demand's source to its sink along consecutive arcs), with
 * *fp NULL and detail in e.  A cycle is not an error: see fwd_loop().
 */
int fwd_build(const struct model *m, const struct plan *p, struct fwd **fp,
    struct err *e);

/* Frees f (NULL ok). */
void fwd_free(struct fwd *f);

/* Entries, sorted by node index, then destination index. */
size_t fwd_n_entries(const struct fwd *f);
const struct fwd_entry *fwd_entry(const struct fwd *f, size_t i);

/* Hops of entry en (en->n_hops of them), ascending arc index. */
const struct fwd_hop *fwd_hops(const struct fwd *f,
    const struct fwd_entry *en);

/*
 * Entries of node v: returns the index of its first entry and sets *np to
 * their count (0 when v forwards nothing; then the index is meaningless).
 */
size_t fwd_node_entries(const struct fwd *f, size_t v, size_t *np);

/* The entry of (v, dst), or NULL when v sends nothing towards dst. */
const struct fwd_entry *fwd_find(const struct fwd *f, size_t v, size_t dst);

/* Cyclic destinations, ascending destination index. */
size_t fwd_n_loops(const struct fwd *f);
const struct fwd_loop *fwd_loop(const struct fwd *f, size_t i);

/*
 * Replays the tables: injects each demand's carried rate at its source,
 * propagates it per destination in topological order of that
 * destination's hops, each node splitting what reaches it by its
 * fractions, and compares the resulting per-arc loads with p's
 * arcs[].load_bps.  Returns 0 with the largest deviation |replayed -
 * planned| / max(|planned|, 1 bit/s) in *devp; ERR_INVALID when a
 * destination's hops form a cycle (no topological order exists) or
 * traffic reaches a node other than its destination that has no entry,
 * with detail in e.  p and m must be those f was built from.
 */
int fwd_check_loads(const struct model *m, const struct plan *p,
    const struct fwd *f, double *devp, struct err *e);

#endif /* WEFT_ENGINE_FWD_H */
