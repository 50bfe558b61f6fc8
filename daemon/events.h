/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Change notifications for event streams: a ring of events, subscribers. */
#ifndef WEFT_DAEMON_EVENTS_H
#define WEFT_DAEMON_EVENTS_H

/*
 * DESIGN
 * Whoever sees a change posts an event (the solver thread a published
 * plan, an HTTP thread a committed write, a worker a sweep's progress).
 * Each event gets the next id of one counter that starts at 1 when the
 * daemon starts, and goes into a ring of the last EVENTS_KEPT events.  A
 * subscriber (an event stream, api/h_events.c) holds a cursor, the id of
 * the last event it took; events_next() hands it the following ones.  No
 * thread waits per subscriber: posting calls each subscriber's wake
 * function, which resumes its suspended connection, and the stream then
 * pulls.  A subscriber that falls more than EVENTS_KEPT events behind
 * skips to the oldest one kept.  A timer thread marks a keep-alive due
 * every keepalive_s and wakes every subscriber.  The number of
 * subscribers is bounded.  Wake functions are called with the module's
 * lock held: they must only flag and resume, never call back in here.
 */

#include <stdbool.h>
#include <stdint.h>

struct err;
struct events;
struct events_sub;

#define EVENTS_KEPT	256	/* events a reconnecting client can get */

enum event_kind {
	EVENT_PLAN = 0,		/* a plan was published */
	EVENT_MODEL = 1,	/* a write committed */
	EVENT_SWEEP = 2,	/* a sweep started, progressed or ended */
};

struct event {
	uint64_t id;		/* set by events_post() */
	enum event_kind kind;
	int64_t revision;	/* plan: plan revision; sweep: sweep id */
	int64_t model_revision;	/* plan, model */
	char status[16];	/* plan: plan status; sweep: its state */
	double max_util;	/* plan: max utilisation */
	long done, total;	/* sweep: scenarios finished, all */
};

/* What events_next() found. */
enum events_next {
	EVENTS_NONE = 0,	/* nothing yet: wait for a wake */
	EVENTS_EVENT = 1,	/* an event, copied out */
	EVENTS_KEEPALIVE = 2,	/* nothing, but a keep-alive is due */
	EVENTS_END = 3,		/* stopping: end the stream */
};

typedef void events_wake_fn(void *ctx);

/*
 * Starts the keep-alive timer; at most max subscribers (0: none), a
 * keep-alive every keepalive_s seconds.  Returns 0 or ERR_INTERNAL.
 */
int events_start(int max, int keepalive_s, struct events **evp);

/* Numbers ev (ev->id), keeps it, wakes every subscriber.  Any thread. */
void events_post(struct events *evs, struct event *ev);

/*
 * Adds a subscriber whose cursor is last_id when has_last (a reconnecting
 * client's Last-Event-ID: it gets the kept events after it), else the
 * newest event (it gets only what comes next).  wake(ctx) is called when
 * there may be something new (see DESIGN).  Returns 0 with *subp, or
 * ERR_BUSY when max subscribers are there or the module is stopping.
 */
int events_subscribe(struct events *evs, bool has_last, uint64_t last_id,
    events_wake_fn *wake, void *ctx, struct events_sub **subp,
    struct err *e);

/* The next thing for sub; *out is set for EVENTS_EVENT.  Any thread. */
enum events_next events_next(struct events *evs, struct events_sub *sub,
    struct event *out);

/* Removes and frees sub (NULL ok); wake is not called after it returns. */
void events_unsubscribe(struct events *evs, struct events_sub *sub);

/* Subscribers now. */
int events_count(struct events *evs);

/*
 * Stops: refuses new subscribers, wakes every one so that its stream
 * ends (events_next() returns EVENTS_END once the kept events it still
 * had are taken).  NULL ok.
 */
void events_stop(struct events *evs);

/* Stops (if not yet), joins the timer, frees (NULL ok).  The subscribers
   must have unsubscribed. */
void events_free(struct events *evs);

#endif /* WEFT_DAEMON_EVENTS_H */
