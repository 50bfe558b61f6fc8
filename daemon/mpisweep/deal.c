/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Dealing a sweep's scenarios out to MPI ranks and gathering the results. */

/*
 * DESIGN
 * Two tags.  TAG_ASK goes to rank 0: a request for a chunk carrying the
 * results of the rank's last chunk (none in its first DEAL_PREFETCH
 * requests).  TAG_CHUNK goes back: {first index, count}, count 0 when
 * nothing is left.  Rank 0 answers every request at once, so a rank
 * knows it is done when all its requests have been answered with count
 * 0.  Rank 0 counts, per rank, the requests it received and the chunks
 * it handed out: a rank sends DEAL_PREFETCH + (its chunks) requests in
 * all, and rank 0 leaves its loop once every result is in and every rank
 * has sent all of its requests.
 */

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <mpi.h>

#include "deal.h"
#include "../base/err.h"
#include "../base/log.h"
#include "../base/xalloc.h"
#include "../../storage/db.h"

enum { TAG_ASK = 1, TAG_CHUNK = 2 };

/* One result on the wire: the record without its pointers, the error
   message inline. */
struct wire {
	struct db_sweep_result r;	/* fail_json and error NULL */
	char error[ERR_MSG_MAX];	/* "" when none */
};

/* A chunk's records in one eager message (DEAL_CHUNK_MAX). */
_Static_assert(DEAL_CHUNK_MAX * sizeof(struct wire) <= 4000,
    "a chunk's results exceed the shared-memory eager limit");

static void
to_wire(const struct db_sweep_result *r, struct wire *w)
{
	memset(w, 0, sizeof(*w));
	w->r = *r;
	w->r.fail_json = NULL;
	w->r.error = NULL;
	if (r->error != NULL)
		snprintf(w->error, sizeof(w->error), "%s", r->error);
}

static void
from_wire(const struct wire *w, const char *label, struct db_sweep_result *r)
{
	*r = w->r;
	r->status[sizeof(r->status) - 1] = '\0';
	r->fail_json = xstrdup(label);
	r->error = NULL;
	if (w->error[0] != '\0' || strcmp(r->status, "failed") == 0)
		r->error = strndup(w->error, sizeof(w->error) - 1);
}

/* The size of the next chunk when left scenarios remain. */
static size_t
chunk_size(size_t left, int ranks)
{
	size_t c = left / (2 * (size_t)ranks);

	if (c < 1)
		c = 1;
	if (c > DEAL_CHUNK_MAX)
		c = DEAL_CHUNK_MAX;
	return c > left ? left : c;
}

/* ---- rank 0 ---- */

struct dealer {
	struct deal *d;
	int ranks;
	size_t next;		/* first index not handed out */
	size_t got;		/* results in d->all */
	long *asked, *chunks;	/* per rank: requests seen, chunks given */
	struct wire *buf;
	size_t cap;		/* records buf holds */
};

/* Takes one request (already probed as st) and answers it. */
static int
answer(struct dealer *g, const MPI_Status *st)
{
	struct deal *d = g->d;
	int src = st->MPI_SOURCE, bytes, k, n_rec;
	long chunk[2];
	size_t c;

	if (MPI_Get_count(st, MPI_BYTE, &bytes) != MPI_SUCCESS || bytes < 0 ||
	    (size_t)bytes % sizeof(struct wire) != 0)
		return ERR_INTERNAL;
	n_rec = bytes / (int)sizeof(struct wire);
	if ((size_t)n_rec > g->cap) {
		g->cap = (size_t)n_rec;
		g->buf = xreallocarray(g->buf, g->cap, sizeof(*g->buf));
	}
	if (MPI_Recv(g->buf, bytes, MPI_BYTE, src, TAG_ASK, MPI_COMM_WORLD,
	    MPI_STATUS_IGNORE) != MPI_SUCCESS)
		return ERR_INTERNAL;
	g->asked[src]++;
	for (k = 0; k < n_rec; k++) {
		if (g->buf[k].r.idx < 0 || (size_t)g->buf[k].r.idx >= d->n ||
		    d->all[g->buf[k].r.idx].fail_json != NULL) {
			log_err("rank %d sent an unexpected result idx=%ld",
			    src, g->buf[k].r.idx);
			return ERR_INTERNAL;
		}
		from_wire(&g->buf[k], d->labels[g->buf[k].r.idx],
		    &d->all[g->buf[k].r.idx]);
		g->got++;
		if (d->progress != NULL)
			d->progress(d->ctx, (size_t)g->buf[k].r.idx);
	}
	c = g->next < d->n ? chunk_size(d->n - g->next, g->ranks) : 0;
	chunk[0] = (long)g->next;
	chunk[1] = (long)c;
	if (c > 0) {
		g->next += c;
		g->chunks[src]++;
	}
	return MPI_Send(chunk, 2, MPI_LONG, src, TAG_CHUNK, MPI_COMM_WORLD) ==
	    MPI_SUCCESS ? 0 : ERR_INTERNAL;
}

/* Whether some rank still owes rank 0 a request. */
static bool
owed(const struct dealer *g)
{
	int k;

	for (k = 1; k < g->ranks; k++)
		if (g->asked[k] < DEAL_PREFETCH + g->chunks[k])
			return true;
	return false;
}

static int
deal_root(struct deal *d, int ranks, double *worst, long *worst_idx)
{
	struct dealer g = { 0 };
	MPI_Status st;
	size_t i;
	int flag, r = ERR_INTERNAL;

	g.d = d;
	g.ranks = ranks;
	g.asked = xcalloc((size_t)ranks, sizeof(*g.asked));
	g.chunks = xcalloc((size_t)ranks, sizeof(*g.chunks));
	while (g.got < d->n || owed(&g)) {
		if (g.next >= d->n) {
			/* Nothing left to solve here: wait for the others. */
			if (MPI_Probe(MPI_ANY_SOURCE, TAG_ASK, MPI_COMM_WORLD,
			    &st) != MPI_SUCCESS || answer(&g, &st) != 0)
				goto out;
			continue;
		}
		/* Answer every request waiting before solving again. */
		for (;;) {
			if (MPI_Iprobe(MPI_ANY_SOURCE, TAG_ASK, MPI_COMM_WORLD,
			    &flag, &st) != MPI_SUCCESS)
				goto out;
			if (!flag)
				break;
			if (answer(&g, &st) != 0)
				goto out;
		}
		/* The answers may have handed out the rest. */
		if (g.next >= d->n)
			continue;
		i = g.next++;
		d->eval(d->ctx, i, &d->all[i], worst, worst_idx);
		d->solved_here++;
		g.got++;
		if (d->progress != NULL)
			d->progress(d->ctx, i);
	}
	r = 0;
out:
	free(g.asked);
	free(g.chunks);
	free(g.buf);
	return r;
}

/* ---- the other ranks ---- */

/*
 * The results go back with a blocking MPI_Send.  A chunk's records fit in
 * the transports' eager limit (see DEAL_CHUNK_MAX), so the send returns
 * at once without waiting for rank 0; were it larger, the rank would wait
 * at most for the scenario rank 0 is solving.  (A nonblocking send would
 * not help: without a progress thread, a large message moves only while
 * the sender is inside MPI, and rank 0 would wait in its receive for the
 * sender's whole next chunk.)
 */
static int
deal_worker(struct deal *d, double *worst, long *worst_idx)
{
	struct db_sweep_result res;
	struct wire *out = xcalloc(DEAL_CHUNK_MAX, sizeof(*out));
	long chunk[2];
	size_t k;
	int open = 0, r = ERR_INTERNAL;

	for (; open < DEAL_PREFETCH; open++)
		if (MPI_Send(out, 0, MPI_BYTE, 0, TAG_ASK, MPI_COMM_WORLD) !=
		    MPI_SUCCESS)
			goto out;
	while (open > 0) {
		if (MPI_Recv(chunk, 2, MPI_LONG, 0, TAG_CHUNK, MPI_COMM_WORLD,
		    MPI_STATUS_IGNORE) != MPI_SUCCESS)
			goto out;
		open--;
		if (chunk[1] == 0)
			continue;
		if (chunk[0] < 0 || chunk[1] < 0 || chunk[1] > DEAL_CHUNK_MAX ||
		    (size_t)(chunk[0] + chunk[1]) > d->n)
			goto out;
		for (k = 0; k < (size_t)chunk[1]; k++) {
			d->eval(d->ctx, (size_t)chunk[0] + k, &res, worst,
			    worst_idx);
			to_wire(&res, &out[k]);
			free(res.fail_json);
			free(res.error);
			d->solved_here++;
		}
		if (MPI_Send(out, (int)(chunk[1] * (long)sizeof(*out)),
		    MPI_BYTE, 0, TAG_ASK, MPI_COMM_WORLD) != MPI_SUCCESS)
			goto out;
		open++;
	}
	r = 0;
out:
	free(out);
	return r;
}

/* ---- both ---- */

struct maxloc {
	double load;
	int idx;
};

int
deal_run(struct deal *d)
{
	struct maxloc *mine = NULL, *all = NULL;
	double *worst = NULL;
	long *worst_idx = NULL;
	size_t a;
	long solved;
	int rank, ranks, r = ERR_INTERNAL;

	d->all = NULL;
	d->per_rank = NULL;
	d->worst = NULL;
	d->worst_idx = NULL;
	d->solved_here = 0;
	if (MPI_Comm_rank(MPI_COMM_WORLD, &rank) != MPI_SUCCESS ||
	    MPI_Comm_size(MPI_COMM_WORLD, &ranks) != MPI_SUCCESS)
		return ERR_INTERNAL;
	if (d->n > INT32_MAX)
		return ERR_INTERNAL;	/* MPI_2INT-style indices below */
	worst = xcalloc(d->n_arcs + 1, sizeof(*worst));
	worst_idx = xcalloc(d->n_arcs + 1, sizeof(*worst_idx));
	for (a = 0; a < d->n_arcs; a++)
		worst_idx[a] = -1;
	if (rank == 0) {
		d->all = xcalloc(d->n + 1, sizeof(*d->all));
		r = deal_root(d, ranks, worst, worst_idx);
	} else
		r = deal_worker(d, worst, worst_idx);
	if (r != 0)
		goto out;
	r = ERR_INTERNAL;
	mine = xcalloc(d->n_arcs + 1, sizeof(*mine));
	all = xcalloc(d->n_arcs + 1, sizeof(*all));
	for (a = 0; a < d->n_arcs; a++) {
		mine[a].load = worst[a];
		mine[a].idx = (int)worst_idx[a];
	}
	if (MPI_Reduce(mine, all, (int)d->n_arcs, MPI_DOUBLE_INT, MPI_MAXLOC,
	    0, MPI_COMM_WORLD) != MPI_SUCCESS)
		goto out;
	solved = (long)d->solved_here;
	if (rank == 0)
		d->per_rank = xcalloc((size_t)ranks, sizeof(*d->per_rank));
	if (MPI_Gather(&solved, 1, MPI_LONG, d->per_rank, 1, MPI_LONG, 0,
	    MPI_COMM_WORLD) != MPI_SUCCESS)
		goto out;
	if (rank == 0)
		for (a = 0; a < d->n_arcs; a++) {
			worst[a] = all[a].load;
			worst_idx[a] = all[a].idx;
		}
	r = 0;
out:
	free(mine);
	free(all);
	if (rank == 0 && r == 0) {
		d->worst = worst;
		d->worst_idx = worst_idx;
	} else {
		free(worst);
		free(worst_idx);
	}
	return r;
}

void
deal_free(struct deal *d)
{
	size_t i;

	for (i = 0; d->all != NULL && i < d->n; i++) {
		free(d->all[i].fail_json);
		free(d->all[i].error);
	}
	free(d->all);
	free(d->worst);
	free(d->worst_idx);
	free(d->per_rank);
}
