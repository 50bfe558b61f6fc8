/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests for hostport_split(): the listen forms "host:port" and
   "[v6]:port" (brackets around an IPv6 literal as in RFC 3986, 3.2.2). */
#include <string.h>

#include "../../tap.h"
#include "../../../daemon/base/hostport.h"

int
main(void)
{
	static const struct {
		const char *listen, *host, *port;	/* host NULL: refused */
	} cases[] = {
		{ "127.0.0.1:8080", "127.0.0.1", "8080" },
		{ "localhost:1", "localhost", "1" },
		{ "[::1]:8080", "::1", "8080" },
		{ "[::]:0", "::", "0" },
		{ "[fe80::1%lo]:80", "fe80::1%lo", "80" },
		{ "::1:8080", NULL, NULL },	/* IPv6 needs brackets */
		{ "127.0.0.1", NULL, NULL },
		{ ":8080", NULL, NULL },
		{ "127.0.0.1:", NULL, NULL },
		{ "[::1]8080", NULL, NULL },
		{ "[::1:8080", NULL, NULL },
		{ "[]:80", NULL, NULL },
		{ "", NULL, NULL },
	};
	char host[16], longname[64];
	const char *port;
	size_t i;
	int r;

	TEST_START("splits host:port and [v6]:port, refuses the rest");
	for (i = 0; i < sizeof(cases) / sizeof(cases[0]); i++) {
		port = NULL;
		r = hostport_split(cases[i].listen, host, sizeof(host), &port);
		if (cases[i].host == NULL) {
			if (r != -1)
				TAP_FAIL("\"%s\" accepted", cases[i].listen);
			continue;
		}
		if (r != 0 || strcmp(host, cases[i].host) != 0 ||
		    port == NULL || strcmp(port, cases[i].port) != 0)
			TAP_FAIL("\"%s\": %d \"%s\" \"%s\"", cases[i].listen,
			    r, r == 0 ? host : "", port ? port : "");
	}
	TEST_DONE();

	TEST_START("a host longer than the buffer or no address is refused");
	memset(longname, 'a', sizeof(longname));
	memcpy(longname + 40, ":80", 4);
	ASSERT_INT_EQ(hostport_split(longname, host, sizeof(host), &port), -1);
	ASSERT_INT_EQ(hostport_split(NULL, host, sizeof(host), &port), -1);
	/* 15 bytes and the NUL fit a buffer of 16. */
	ASSERT_INT_EQ(hostport_split("abcdefghijklmno:1", host, sizeof(host),
	    &port), 0);
	ASSERT_INT_EQ(hostport_split("abcdefghijklmnop:1", host, sizeof(host),
	    &port), -1);
	TEST_DONE();

	return tap_finish();
}
