/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Long-poll waiters: a bounded list, told on publication or at a deadline. */

#include <pthread.h>
#include <stdlib.h>
#include <time.h>

#include "planwait.h"
#include "base/clock.h"
#include "base/err.h"
#include "base/log.h"
#include "base/xalloc.h"

struct waiter {
	int64_t after;		/* wants a plan revision > after */
	double deadline_ms;	/* monotonic clock */
	planwait_fn *fn;
	void *ctx;
	struct waiter *next;
};

struct planwait {
	pthread_mutex_t mu;
	pthread_cond_t cv;	/* the list or quit changed (monotonic) */
	struct waiter *head;	/* under mu, unordered */
	int n, max;		/* under mu */
	int64_t newest;		/* newest published revision, under mu */
	bool stopping;		/* under mu: no new waiters */
	bool quit;		/* under mu: the timer thread ends */
	pthread_t timer;
};

/* Calls and frees every waiter of list (no lock held). */
static void
tell(struct waiter *list, enum planwait_why why)
{
	struct waiter *w, *next;

	for (w = list; w != NULL; w = next) {
		next = w->next;
		w->fn(w->ctx, why);
		free(w);
	}
}

/*
 * Moves the waiters for which pick(w, arg) holds from pw's list to a new
 * list and returns it.  Under mu.
 */
static struct waiter *
take(struct planwait *pw, bool (*pick)(const struct waiter *, double),
    double arg)
{
	struct waiter **pp = &pw->head, *w, *out = NULL;

	while ((w = *pp) != NULL) {
		if (!pick(w, arg)) {
			pp = &w->next;
			continue;
		}
		*pp = w->next;
		w->next = out;
		out = w;
		pw->n--;
	}
	return out;
}

static bool
expired(const struct waiter *w, double now)
{
	return w->deadline_ms <= now;
}

static bool
satisfied(const struct waiter *w, double rev)
{
	return (double)w->after < rev;
}

static bool
any(const struct waiter *w, double unused)
{
	(void)w;
	(void)unused;
	return true;
}

/* The timer thread: sleeps until the earliest deadline. */
static void *
run(void *arg)
{
	struct planwait *pw = arg;
	struct waiter *w, *due;
	struct timespec ts;
	double now, first;

	pthread_mutex_lock(&pw->mu);
	while (!pw->quit) {
		now = clock_ms();
		if ((due = take(pw, expired, now)) != NULL) {
			pthread_mutex_unlock(&pw->mu);
			tell(due, PLANWAIT_TIMEOUT);
			pthread_mutex_lock(&pw->mu);
			continue;
		}
		if (pw->head == NULL) {
			pthread_cond_wait(&pw->cv, &pw->mu);
			continue;
		}
		first = pw->head->deadline_ms;
		for (w = pw->head->next; w != NULL; w = w->next)
			if (w->deadline_ms < first)
				first = w->deadline_ms;
		/* A millisecond late rather than early: no spinning. */
		clock_timespec(&ts, first + 1);
		pthread_cond_timedwait(&pw->cv, &pw->mu, &ts);
	}
	pthread_mutex_unlock(&pw->mu);
	return NULL;
}

int
planwait_start(int max, int64_t newest, struct planwait **pwp)
{
	struct planwait *pw = xcalloc(1, sizeof(*pw));

	*pwp = NULL;
	pw->max = max < 0 ? 0 : max;
	pw->newest = newest;
	pthread_mutex_init(&pw->mu, NULL);
	clock_cond_init(&pw->cv);
	if (pthread_create(&pw->timer, NULL, run, pw) != 0) {
		log_err("cannot start the long-poll timer thread");
		pthread_cond_destroy(&pw->cv);
		pthread_mutex_destroy(&pw->mu);
		free(pw);
		return ERR_INTERNAL;
	}
	*pwp = pw;
	return 0;
}

int
planwait_add(struct planwait *pw, int64_t after, double wait_ms,
    planwait_fn *fn, void *ctx, bool *queuedp, struct err *e)
{
	struct waiter *w;

	*queuedp = false;
	pthread_mutex_lock(&pw->mu);
	if (pw->newest > after) {
		pthread_mutex_unlock(&pw->mu);
		return 0;
	}
	if (pw->stopping || pw->n >= pw->max) {
		pthread_mutex_unlock(&pw->mu);
		return err_set(e, ERR_BUSY, NULL, pw->stopping ?
		    "the daemon is stopping" : "%d long polls wait already "
		    "(long_poll_max)", pw->max);
	}
	w = xcalloc(1, sizeof(*w));
	w->after = after;
	w->deadline_ms = clock_ms() + wait_ms;
	w->fn = fn;
	w->ctx = ctx;
	w->next = pw->head;
	pw->head = w;
	pw->n++;
	*queuedp = true;
	pthread_cond_signal(&pw->cv);
	pthread_mutex_unlock(&pw->mu);
	return 0;
}

void
planwait_published(struct planwait *pw, int64_t rev)
{
	struct waiter *ready;

	pthread_mutex_lock(&pw->mu);
	if (rev > pw->newest)
		pw->newest = rev;
	ready = take(pw, satisfied, (double)rev);
	pthread_mutex_unlock(&pw->mu);
	tell(ready, PLANWAIT_NEWER);
}

int
planwait_count(struct planwait *pw)
{
	int n;

	pthread_mutex_lock(&pw->mu);
	n = pw->n;
	pthread_mutex_unlock(&pw->mu);
	return n;
}

void
planwait_stop(struct planwait *pw)
{
	struct waiter *all;

	if (pw == NULL)
		return;
	pthread_mutex_lock(&pw->mu);
	pw->stopping = true;
	all = take(pw, any, 0);
	pthread_mutex_unlock(&pw->mu);
	tell(all, PLANWAIT_STOPPING);
}

void
planwait_free(struct planwait *pw)
{
	if (pw == NULL)
		return;
	planwait_stop(pw);
	pthread_mutex_lock(&pw->mu);
	pw->quit = true;
	pthread_cond_signal(&pw->cv);
	pthread_mutex_unlock(&pw->mu);
	pthread_join(pw->timer, NULL);
	pthread_cond_destroy(&pw->cv);
	pthread_mutex_destroy(&pw->mu);
	free(pw);
}
