/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests for the clock helpers, against POSIX clock_gettime(). */
#include <errno.h>
#include <pthread.h>
#include <time.h>

#include "../../tap.h"
#include "../../../daemon/base/clock.h"

/* ts in milliseconds. */
static double
ms_of(const struct timespec *ts)
{
	return (double)ts->tv_sec * 1e3 + (double)ts->tv_nsec / 1e6;
}

int
main(void)
{
	static const long waits_ms[] = { 0, 1, 999, 1000, 1001, 2500,
	    86400000L };
	struct timespec before, after, ts;
	pthread_mutex_t mu = PTHREAD_MUTEX_INITIALIZER;
	pthread_cond_t cv;
	double t0, t1, at;
	size_t i;
	int r;

	/* POSIX: CLOCK_MONOTONIC never goes back. */
	TEST_START("clock_ms reads CLOCK_MONOTONIC in milliseconds");
	clock_gettime(CLOCK_MONOTONIC, &before);
	t0 = clock_ms();
	t1 = clock_ms();
	clock_gettime(CLOCK_MONOTONIC, &after);
	ASSERT_TRUE(ms_of(&before) <= t0);
	ASSERT_TRUE(t0 <= t1);
	ASSERT_TRUE(t1 <= ms_of(&after));
	TEST_DONE();

	/* POSIX: tv_nsec of a valid abstime is in [0, 1e9). */
	TEST_START("clock_deadline is ms after CLOCK_REALTIME, normalised");
	for (i = 0; i < sizeof(waits_ms) / sizeof(waits_ms[0]); i++) {
		clock_gettime(CLOCK_REALTIME, &before);
		clock_deadline(&ts, waits_ms[i]);
		clock_gettime(CLOCK_REALTIME, &after);
		ASSERT_TRUE(ts.tv_nsec >= 0 && ts.tv_nsec < 1000000000L);
		ASSERT_TRUE((ts.tv_sec - before.tv_sec) * 1000000000LL +
		    (ts.tv_nsec - before.tv_nsec) >=
		    (long long)waits_ms[i] * 1000000LL);
		ASSERT_TRUE((ts.tv_sec - after.tv_sec) * 1000000000LL +
		    (ts.tv_nsec - after.tv_nsec) <=
		    (long long)waits_ms[i] * 1000000LL);
	}
	TEST_DONE();

	TEST_START("clock_timespec splits milliseconds into s and ns");
	clock_timespec(&ts, 1234.5);
	ASSERT_INT_EQ(ts.tv_sec, 1);
	ASSERT_INT_EQ(ts.tv_nsec, 234500000L);
	clock_timespec(&ts, 86400000.0);
	ASSERT_INT_EQ(ts.tv_sec, 86400);
	ASSERT_INT_EQ(ts.tv_nsec, 0);
	/* Just below a whole second: never a tv_nsec of 1e9. */
	clock_timespec(&ts, 1999.99999999999);
	ASSERT_TRUE(ts.tv_nsec >= 0 && ts.tv_nsec < 1000000000L);
	TEST_DONE();

	/*
	 * POSIX pthread_cond_timedwait: ETIMEDOUT only once the clock of the
	 * variable has passed abstime.  On CLOCK_REALTIME a monotonic
	 * instant lies decades back and the wait would end at once.
	 */
	TEST_START("clock_cond_init waits on the monotonic clock");
	clock_cond_init(&cv);
	at = clock_ms() + 20;
	clock_timespec(&ts, at);
	pthread_mutex_lock(&mu);
	do
		r = pthread_cond_timedwait(&cv, &mu, &ts);
	while (r == 0);
	pthread_mutex_unlock(&mu);
	ASSERT_INT_EQ(r, ETIMEDOUT);
	ASSERT_TRUE(clock_ms() >= ms_of(&ts));
	pthread_cond_destroy(&cv);
	TEST_DONE();

	return tap_finish();
}
