/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The event ring, its subscribers and the keep-alive timer. */

#include <pthread.h>
#include <stdlib.h>
#include <time.h>

#include "events.h"
#include "base/clock.h"
#include "base/err.h"
#include "base/log.h"
#include "base/xalloc.h"

struct events_sub {
	uint64_t cursor;	/* id of the last event taken */
	uint64_t ticks_seen;	/* keep-alive ticks answered */
	events_wake_fn *wake;
	void *ctx;
	struct events_sub *prev, *next;
};

struct events {
	pthread_mutex_t mu;
	pthread_cond_t cv;	/* quit (monotonic clock) */
	struct event ring[EVENTS_KEPT];	/* event id i at i % EVENTS_KEPT */
	uint64_t last_id;	/* newest id given, 0: none; under mu */
	uint64_t ticks;		/* keep-alives due so far; under mu */
	struct events_sub *subs;	/* under mu */
	int n, max;		/* under mu */
	int keepalive_s;
	bool stopping, quit;	/* under mu */
	pthread_t timer;
};

/* Wakes every subscriber.  Under mu. */
static void
wake_all(struct events *evs)
{
	struct events_sub *s;

	for (s = evs->subs; s != NULL; s = s->next)
		s->wake(s->ctx);
}

/* The keep-alive timer: a tick every keepalive_s seconds. */
static void *
run(void *arg)
{
	struct events *evs = arg;
	struct timespec ts;
	double next;

	pthread_mutex_lock(&evs->mu);
	next = clock_ms();
	while (!evs->quit) {
		next += evs->keepalive_s * 1e3;
		clock_timespec(&ts, next);
		while (!evs->quit &&
		    pthread_cond_timedwait(&evs->cv, &evs->mu, &ts) == 0)
			;
		if (evs->quit)
			break;
		evs->ticks++;
		wake_all(evs);
	}
	pthread_mutex_unlock(&evs->mu);
	return NULL;
}

int
events_start(int max, int keepalive_s, struct events **evp)
{
	struct events *evs = xcalloc(1, sizeof(*evs));

	*evp = NULL;
	evs->max = max < 0 ? 0 : max;
	evs->keepalive_s = keepalive_s < 1 ? 1 : keepalive_s;
	pthread_mutex_init(&evs->mu, NULL);
	clock_cond_init(&evs->cv);
	if (pthread_create(&evs->timer, NULL, run, evs) != 0) {
		log_err("cannot start the event keep-alive thread");
		pthread_cond_destroy(&evs->cv);
		pthread_mutex_destroy(&evs->mu);
		free(evs);
		return ERR_INTERNAL;
	}
	*evp = evs;
	return 0;
}

void
events_post(struct events *evs, struct event *ev)
{
	pthread_mutex_lock(&evs->mu);
	ev->id = ++evs->last_id;
	evs->ring[ev->id % EVENTS_KEPT] = *ev;
	wake_all(evs);
	pthread_mutex_unlock(&evs->mu);
}

int
events_subscribe(struct events *evs, bool has_last, uint64_t last_id,
    events_wake_fn *wake, void *ctx, struct events_sub **subp, struct err *e)
{
	struct events_sub *s;

	*subp = NULL;
	pthread_mutex_lock(&evs->mu);
	if (evs->stopping || evs->n >= evs->max) {
		pthread_mutex_unlock(&evs->mu);
		return err_set(e, ERR_BUSY, NULL, evs->stopping ?
		    "the daemon is stopping" : "%d event streams are open "
		    "already (events_max)", evs->max);
	}
	s = xcalloc(1, sizeof(*s));
	/*
	 * An id from before a restart may be ahead of ours: then the
	 * client gets what comes next, as a new one would.
	 */
	s->cursor = has_last && last_id < evs->last_id ? last_id :
	    evs->last_id;
	s->ticks_seen = evs->ticks;
	s->wake = wake;
	s->ctx = ctx;
	s->next = evs->subs;
	if (evs->subs != NULL)
		evs->subs->prev = s;
	evs->subs = s;
	evs->n++;
	pthread_mutex_unlock(&evs->mu);
	*subp = s;
	return 0;
}

enum events_next
events_next(struct events *evs, struct events_sub *sub, struct event *out)
{
	enum events_next r = EVENTS_NONE;

	pthread_mutex_lock(&evs->mu);
	/* Fallen behind the ring: skip to the oldest event kept. */
	if (evs->last_id > EVENTS_KEPT &&
	    sub->cursor < evs->last_id - EVENTS_KEPT)
		sub->cursor = evs->last_id - EVENTS_KEPT;
	if (sub->cursor < evs->last_id) {
		sub->cursor++;
		*out = evs->ring[sub->cursor % EVENTS_KEPT];
		r = EVENTS_EVENT;
	} else if (evs->stopping) {
		r = EVENTS_END;
	} else if (sub->ticks_seen != evs->ticks) {
		sub->ticks_seen = evs->ticks;
		r = EVENTS_KEEPALIVE;
	}
	pthread_mutex_unlock(&evs->mu);
	return r;
}

void
events_unsubscribe(struct events *evs, struct events_sub *sub)
{
	if (sub == NULL)
		return;
	pthread_mutex_lock(&evs->mu);
	if (sub->prev != NULL)
		sub->prev->next = sub->next;
	else
		evs->subs = sub->next;
	if (sub->next != NULL)
		sub->next->prev = sub->prev;
	evs->n--;
	pthread_mutex_unlock(&evs->mu);
	free(sub);
}

int
events_count(struct events *evs)
{
	int n;

	pthread_mutex_lock(&evs->mu);
	n = evs->n;
	pthread_mutex_unlock(&evs->mu);
	return n;
}

void
events_stop(struct events *evs)
{
	if (evs == NULL)
		return;
	pthread_mutex_lock(&evs->mu);
	evs->stopping = true;
	wake_all(evs);
	pthread_mutex_unlock(&evs->mu);
}

void
events_free(struct events *evs)
{
	if (evs == NULL)
		return;
	events_stop(evs);
	pthread_mutex_lock(&evs->mu);
	evs->quit = true;
	pthread_cond_signal(&evs->cv);
	pthread_mutex_unlock(&evs->mu);
	pthread_join(evs->timer, NULL);
	if (evs->n != 0)
		log_err("event subscribers left at exit n=%d", evs->n);
	pthread_cond_destroy(&evs->cv);
	pthread_mutex_destroy(&evs->mu);
	free(evs);
}
