/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The monotonic clock in milliseconds, and deadlines for timed waits. */
#include <pthread.h>
#include <time.h>

#include "clock.h"

#define NS_PER_S	1000000000L

double
clock_ms(void)
{
	struct timespec ts;

	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec * 1e3 + (double)ts.tv_nsec / 1e6;
}

void
clock_deadline(struct timespec *ts, long ms)
{
	clock_gettime(CLOCK_REALTIME, ts);
	ts->tv_sec += ms / 1000;
	ts->tv_nsec += (ms % 1000) * 1000000L;
	if (ts->tv_nsec >= NS_PER_S) {
		ts->tv_sec++;
		ts->tv_nsec -= NS_PER_S;
	}
}

void
clock_timespec(struct timespec *ts, double at_ms)
{
	ts->tv_sec = (time_t)(at_ms / 1e3);
	ts->tv_nsec = (long)((at_ms - (double)ts->tv_sec * 1e3) * 1e6);
	/* Rounding may reach a whole second; stay just below it. */
	if (ts->tv_nsec >= NS_PER_S)
		ts->tv_nsec = NS_PER_S - 1;
}

void
clock_cond_init(pthread_cond_t *cv)
{
	pthread_condattr_t ca;

	pthread_condattr_init(&ca);
	pthread_condattr_setclock(&ca, CLOCK_MONOTONIC);
	pthread_cond_init(cv, &ca);
	pthread_condattr_destroy(&ca);
}
