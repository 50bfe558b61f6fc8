/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A fixed pool of worker threads for what-ifs and sweep scenarios. */
#ifndef WEFT_DAEMON_WORKERS_H
#define WEFT_DAEMON_WORKERS_H

/*
 * DESIGN
 * n threads take tasks from two queues: what-ifs first, then sweep
 * scenarios.  A what-if is admitted only when it can start at once (a
 * worker is idle) or fewer than queue_max what-ifs already wait; else
 * the caller answers 503, so nothing queues without bound.  Sweep tasks
 * are queued by the sweep runner, which bounds them (one sweep at a time,
 * at most sweep_max_scenarios).  A task runs on a worker thread, which
 * may call the engine (GLPK is thread-local); the thread frees its solver
 * environment before it exits.  workers_stop() cancels queued tasks (each
 * runs with cancelled set, to answer its waiter) and joins the threads.
 */

#include <stdbool.h>

struct workers;

struct task {
	/* Runs the task on a worker thread; cancelled: the pool is stopping
	   and the task must only release what it holds. */
	void (*run)(struct task *t, bool cancelled);
	struct task *next;	/* the pool's */
};

enum task_kind {
	TASK_WHATIF = 0,
	TASK_SWEEP = 1,
};

/* Starts n threads (n >= 1).  Returns 0 or ERR_INTERNAL. */
int workers_start(int n, int queue_max, struct workers **wp);

/*
 * Queues t.  A what-if: ERR_BUSY when every worker is busy and queue_max
 * what-ifs already wait, or while stopping.  A sweep task: ERR_BUSY only
 * while stopping.  The pool never frees t; t->run does what it must.
 */
int workers_submit(struct workers *w, struct task *t, enum task_kind kind);

/* Threads in the pool. */
int workers_count(const struct workers *w);

/* Cancels queued tasks, waits for running ones, joins and frees. */
void workers_stop(struct workers *w);

#endif /* WEFT_DAEMON_WORKERS_H */
