/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests for the error detail struct and the allocation wrappers. */
#include <stdlib.h>
#include <string.h>

#include "../../tap.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/xalloc.h"

int
main(void)
{
	struct err e = { 0 };
	char *s;

	TEST_START("err_set records the first error and returns its code");
	ASSERT_INT_EQ(err_set(&e, ERR_INVALID, "links[2].a", "unknown node %s",
	    "X"), ERR_INVALID);
	ASSERT_INT_EQ(err_set(&e, ERR_NOTFOUND, "b", "second"), ERR_NOTFOUND);
	ASSERT_INT_EQ(e.code, ERR_INVALID);
	ASSERT_STR_EQ(e.where, "links[2].a");
	ASSERT_STR_EQ(e.msg, "unknown node X");
	TEST_DONE();

	TEST_START("err_set keeps a message to one line");
	err_clear(&e);
	err_set(&e, ERR_INVALID, NULL, "first line\nsecond line");
	ASSERT_STR_EQ(e.msg, "first line");
	ASSERT_STR_EQ(e.where, "");
	TEST_DONE();

	TEST_START("err_set accepts a NULL detail struct");
	ASSERT_INT_EQ(err_set(NULL, ERR_IO, "x", "y"), ERR_IO);
	TEST_DONE();

	TEST_START("every code has a distinct stable word");
	{
		static const int codes[] = { ERR_INTERNAL, ERR_NOMEM,
		    ERR_INVALID, ERR_NOTFOUND, ERR_CONFLICT, ERR_TOOBIG,
		    ERR_BUSY, ERR_IO, ERR_DB, ERR_SOLVER, ERR_TIMEOUT,
		    ERR_MEDIATYPE, ERR_METHOD };
		size_t i, j, n = sizeof(codes) / sizeof(codes[0]);

		for (i = 0; i < n; i++)
			for (j = i + 1; j < n; j++)
				ASSERT_TRUE(strcmp(err_word(codes[i]),
				    err_word(codes[j])) != 0);
		ASSERT_STR_EQ(err_word(ERR_INVALID), "invalid");
		ASSERT_STR_EQ(err_word(-999), "internal");
	}
	TEST_DONE();

	TEST_START("a long message is truncated, not overrun");
	err_clear(&e);
	{
		char big[1000];

		memset(big, 'x', sizeof(big) - 1);
		big[sizeof(big) - 1] = '\0';
		err_set(&e, ERR_INVALID, big, "%s", big);
		ASSERT_INT_EQ(strlen(e.msg), ERR_MSG_MAX - 1);
		ASSERT_INT_EQ(strlen(e.where), ERR_WHERE_MAX - 1);
	}
	TEST_DONE();

	TEST_START("xasprintf and xstrndup build new strings");
	s = xasprintf("%s-%d", "link", 42);
	ASSERT_STR_EQ(s, "link-42");
	free(s);
	s = xstrndup("abcdef", 3);
	ASSERT_STR_EQ(s, "abc");
	free(s);
	TEST_DONE();

	return tap_finish();
}
