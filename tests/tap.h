/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A small TAP harness for weft's unit tests: one header, no library. */
#ifndef WEFT_TESTS_TAP_H
#define WEFT_TESTS_TAP_H

/*
 * Usage: TEST_START("rejects a demand with equal endpoints"); ...asserts...;
 * TEST_DONE(); and at the end of main, return tap_finish().  A failed
 * assertion prints a TAP "not ok" with file:line and skips the rest of that
 * case (it jumps to TEST_DONE via the case's own flag).
 */

#include <math.h>
#include <stdio.h>
#include <string.h>

static int tap_n, tap_failed, tap_case_failed;
static const char *tap_case;

#define TEST_START(name) do { tap_case = (name); tap_case_failed = 0; } while (0)

#define TAP_FAIL(...) do {						\
	if (!tap_case_failed) {						\
		printf("# %s:%d: ", __FILE__, __LINE__);		\
		printf(__VA_ARGS__);					\
		printf("\n");						\
	}								\
	tap_case_failed = 1;						\
} while (0)

#define ASSERT_TRUE(c) do {						\
	if (!(c))							\
		TAP_FAIL("assertion failed: %s", #c);			\
} while (0)

#define ASSERT_INT_EQ(a, b) do {					\
	long long _a = (long long)(a), _b = (long long)(b);		\
	if (_a != _b)							\
		TAP_FAIL("%s == %s: %lld != %lld", #a, #b, _a, _b);	\
} while (0)

#define ASSERT_STR_EQ(a, b) do {					\
	const char *_a = (a), *_b = (b);				\
	if (_a == NULL || _b == NULL || strcmp(_a, _b) != 0)		\
		TAP_FAIL("%s == %s: \"%s\" != \"%s\"", #a, #b,		\
		    _a ? _a : "(null)", _b ? _b : "(null)");		\
} while (0)

/* |a - b| <= tol * max(1, |b|): relative for large values. */
#define ASSERT_DBL_NEAR(a, b, tol) do {					\
	double _a = (a), _b = (b);					\
	if (!(fabs(_a - _b) <= (tol) * fmax(1.0, fabs(_b))))		\
		TAP_FAIL("%s ~ %s: %.12g != %.12g (tol %g)", #a, #b,	\
		    _a, _b, (double)(tol));				\
} while (0)

#define TEST_DONE() do {						\
	tap_n++;							\
	if (tap_case_failed)						\
		tap_failed++;						\
	printf("%s %d - %s\n", tap_case_failed ? "not ok" : "ok",	\
	    tap_n, tap_case);						\
} while (0)

static inline int
tap_finish(void)
{
	printf("1..%d\n", tap_n);
	if (tap_failed)
		printf("# %d of %d failed\n", tap_failed, tap_n);
	return tap_failed != 0;
}

#endif /* WEFT_TESTS_TAP_H */
