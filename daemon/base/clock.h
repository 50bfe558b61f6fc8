/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Time for durations and for the deadlines of condition-variable waits. */
#ifndef WEFT_BASE_CLOCK_H
#define WEFT_BASE_CLOCK_H

/*
 * Durations, time limits and timers run on the monotonic clock, which a
 * change of the wall clock does not move.  A condition variable times its
 * waits on CLOCK_REALTIME unless it was made with clock_cond_init(); the
 * deadline of a wait must be taken on the clock of its variable.  Every
 * function may be called from any thread.
 */

#include <pthread.h>
#include <time.h>

/* The monotonic clock in milliseconds since an unspecified start. */
double clock_ms(void);

/*
 * Sets *ts to ms milliseconds (>= 0) from now on CLOCK_REALTIME, with
 * tv_nsec below one second: the deadline of a pthread_cond_timedwait() on
 * a condition variable made with default attributes.
 */
void clock_deadline(struct timespec *ts, long ms);

/*
 * Sets *ts to the monotonic instant at_ms (as clock_ms() counts it), for
 * a pthread_cond_timedwait() on a variable made by clock_cond_init().
 */
void clock_timespec(struct timespec *ts, double at_ms);

/*
 * Initialises *cv as a condition variable whose timed waits run on the
 * monotonic clock; destroy it with pthread_cond_destroy().
 */
void clock_cond_init(pthread_cond_t *cv);

#endif /* WEFT_BASE_CLOCK_H */
