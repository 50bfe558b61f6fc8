/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The worker pool: two FIFO queues, what-ifs before sweep scenarios. */

#include <pthread.h>
#include <stdlib.h>

#include "workers.h"
#include "base/err.h"
#include "base/log.h"
#include "base/xalloc.h"
#include "engine/engine.h"

struct queue {
	struct task *head, *tail;
	int n;
};

struct workers {
	pthread_mutex_t mu;
	pthread_cond_t cv;
	struct queue q[2];	/* by enum task_kind, under mu */
	int n_threads;
	int idle;		/* under mu */
	int queue_max;
	bool stopping;		/* under mu */
	pthread_t *threads;
};

static void
push(struct queue *q, struct task *t)
{
	t->next = NULL;
	if (q->tail != NULL)
		q->tail->next = t;
	else
		q->head = t;
	q->tail = t;
	q->n++;
}

static struct task *
pop(struct queue *q)
{
	struct task *t = q->head;

	if (t == NULL)
		return NULL;
	q->head = t->next;
	if (q->head == NULL)
		q->tail = NULL;
	q->n--;
	t->next = NULL;
	return t;
}

static void *
run(void *arg)
{
	struct workers *w = arg;
	struct task *t;

	pthread_mutex_lock(&w->mu);
	for (;;) {
		while (!w->stopping && w->q[TASK_WHATIF].head == NULL &&
		    w->q[TASK_SWEEP].head == NULL)
			pthread_cond_wait(&w->cv, &w->mu);
		if (w->stopping)
			break;
		if ((t = pop(&w->q[TASK_WHATIF])) == NULL)
			t = pop(&w->q[TASK_SWEEP]);
		w->idle--;
		pthread_mutex_unlock(&w->mu);
		t->run(t, false);
		pthread_mutex_lock(&w->mu);
		w->idle++;
	}
	pthread_mutex_unlock(&w->mu);
	engine_thread_done();
	return NULL;
}

int
workers_start(int n, int queue_max, struct workers **wp)
{
	struct workers *w = xcalloc(1, sizeof(*w));
	int i;

	*wp = NULL;
	if (n < 1)
		n = 1;
	pthread_mutex_init(&w->mu, NULL);
	pthread_cond_init(&w->cv, NULL);
	w->queue_max = queue_max < 0 ? 0 : queue_max;
	w->threads = xcalloc((size_t)n, sizeof(*w->threads));
	for (i = 0; i < n; i++) {
		pthread_mutex_lock(&w->mu);
		w->idle++;
		pthread_mutex_unlock(&w->mu);
		if (pthread_create(&w->threads[i], NULL, run, w) != 0) {
			log_err("cannot start worker thread %d", i);
			pthread_mutex_lock(&w->mu);
			w->idle--;
			pthread_mutex_unlock(&w->mu);
			w->n_threads = i;
			workers_stop(w);
			return ERR_INTERNAL;
		}
		w->n_threads = i + 1;
	}
	*wp = w;
	return 0;
}

int
workers_submit(struct workers *w, struct task *t, enum task_kind kind)
{
	int r = 0;

	pthread_mutex_lock(&w->mu);
	if (w->stopping)
		r = ERR_BUSY;
	else if (kind == TASK_WHATIF &&
	    w->q[TASK_WHATIF].n >= w->idle + w->queue_max)
		r = ERR_BUSY;
	else {
		push(&w->q[kind], t);
		pthread_cond_signal(&w->cv);
	}
	pthread_mutex_unlock(&w->mu);
	return r;
}

int
workers_count(const struct workers *w)
{
	return w->n_threads;
}

void
workers_stop(struct workers *w)
{
	struct task *t;
	int i, k;

	if (w == NULL)
		return;
	pthread_mutex_lock(&w->mu);
	w->stopping = true;
	pthread_cond_broadcast(&w->cv);
	pthread_mutex_unlock(&w->mu);
	for (i = 0; i < w->n_threads; i++)
		pthread_join(w->threads[i], NULL);
	/* No thread is left: the queues are ours. */
	for (k = 0; k < 2; k++)
		while ((t = pop(&w->q[k])) != NULL)
			t->run(t, true);
	pthread_cond_destroy(&w->cv);
	pthread_mutex_destroy(&w->mu);
	free(w->threads);
	free(w);
}
