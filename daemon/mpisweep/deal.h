/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Dealing a sweep's scenarios out to MPI ranks and gathering the results. */
#ifndef WEFT_MPISWEEP_DEAL_H
#define WEFT_MPISWEEP_DEAL_H

/*
 * DESIGN
 * Every rank, rank 0 included, solves scenarios.  Rank 0 deals: it
 * keeps the next unsolved index and hands the other ranks runs of
 * consecutive indices ("chunks") on request, largest at first and
 * shrinking as the sweep ends (each chunk is the remaining count over
 * twice the ranks, at least 1 and at most DEAL_CHUNK_MAX), so a slow
 * scenario near the end holds up little.  A rank asks for its next chunk
 * with the results of its last one, and keeps DEAL_PREFETCH requests
 * open so it has the next chunk in hand while rank 0 is busy solving.
 * Rank 0 itself takes one scenario at a time and answers requests
 * between them.  The distribution is therefore dynamic: a rank that
 * meets cheap scenarios simply asks more often.
 *
 * Results travel as fixed-size records of plain bytes (the ranks run the
 * same build on the same kind of machine).  Each rank keeps the worst
 * load of every arc over the scenarios it solved; at the end one
 * MPI_Reduce with MPI_MAXLOC gives rank 0 the largest load and, among
 * equal loads, the lowest scenario index, whatever the dealing was.
 *
 * MPI is called from the main thread only (MPI_THREAD_SINGLE suffices).
 */

#include <stdbool.h>
#include <stddef.h>

struct db_sweep_result;

/* Scenarios in one chunk at most: their records (about 350 bytes each)
   stay under Open MPI's smallest default eager limit (4 KiB, shared
   memory), so a rank's results never wait for rank 0 to take them. */
#define DEAL_CHUNK_MAX	8
#define DEAL_PREFETCH	2	/* requests a rank keeps open */

/*
 * Solves scenario i on the calling rank into *res (its members owned
 * by res) and folds its arc loads into the rank's worst[] and
 * worst_idx[] (n_arcs entries each).
 */
typedef void deal_eval_fn(void *ctx, size_t i, struct db_sweep_result *res,
    double *worst, long *worst_idx);

/*
 * Called on rank 0 after each result it has gathered, with the results
 * so far; may store them (the database writes batches).
 */
typedef void deal_progress_fn(void *ctx, size_t i);

struct deal {
	size_t n;		/* scenarios */
	size_t n_arcs;		/* arcs of the live model */
	char *const *labels;	/* borrowed, n: each scenario's fail_json,
				   given to the results rank 0 receives */
	deal_eval_fn *eval;
	deal_progress_fn *progress;	/* may be NULL */
	void *ctx;
	/* OUT, on rank 0 only (the caller frees them with their members): */
	struct db_sweep_result *all;	/* n entries, by index */
	double *worst;		/* n_arcs: largest load over all scenarios */
	long *worst_idx;	/* n_arcs: its scenario, -1 when none */
	long *per_rank;		/* ranks entries: scenarios each solved */
	/* OUT, on every rank: */
	size_t solved_here;	/* scenarios this rank solved */
};

/*
 * Runs the sweep collectively: every rank of MPI_COMM_WORLD calls it
 * with the same n and n_arcs.  Returns 0, or ERR_INTERNAL when MPI
 * failed (the caller aborts).  Rank 0 sees d->all filled and every entry
 * solved.
 */
int deal_run(struct deal *d);

/* Frees what deal_run() made (all members of d->all included); d's
   pointers are not to be used afterwards. */
void deal_free(struct deal *d);

#endif /* WEFT_MPISWEEP_DEAL_H */
