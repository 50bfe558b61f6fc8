/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests for bearer tokens (api/auth.c): the rule, tokens, the checker. */

/*
 * The expected outcomes are written out here from the rule as the issue
 * states it (loopback and no token: open; a token exists or a non-loopback
 * address: writes need a token of the route's role; reads too when
 * closed), not derived from the code.  Addresses are classified against
 * RFC 1122 3.2.1.3 (127.0.0.0/8 is loopback) and RFC 4291 2.5.3 (::1) and
 * 2.5.5.2 (IPv4-mapped addresses); bearer headers against RFC 6750 2.1.
 * The token hash is checked against SHA-256 of salt || text computed in
 * one call (daemon/base/sha256.c, itself checked against the FIPS 180-4
 * examples in tests/unit/base/sha256_test.c).
 */

#include <sys/socket.h>
#include <sys/types.h>

#include <netdb.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "../../tap.h"
#include "../../../api/auth.h"
#include "../../../daemon/base/err.h"
#include "../../../daemon/base/sha256.h"
#include "../../../daemon/base/xalloc.h"
#include "../../../storage/db.h"

/* ---- a token store standing in for the database ---- */

struct store {
	struct db_token toks[8];
	size_t n;
	int loads;		/* times the checker read the store */
	bool fail;		/* the next reads fail */
};

static int
load(void *ctx, struct db_token **tp, size_t *np, struct err *e)
{
	struct store *s = ctx;

	s->loads++;
	if (s->fail)
		return err_set(e, ERR_DB, NULL, "the store is down");
	*tp = xcalloc(s->n + 1, sizeof(**tp));
	memcpy(*tp, s->toks, s->n * sizeof(**tp));
	*np = s->n;
	return 0;
}

/* Adds a token of role (and name) to s; its text goes to text. */
static void
add(struct store *s, int64_t id, const char *role, const char *name,
    char text[AUTH_TOKEN_LEN + 1])
{
	struct db_token *t = &s->toks[s->n++];
	struct err e = { 0 };

	memset(t, 0, sizeof(*t));
	t->id = id;
	snprintf(t->role, sizeof(t->role), "%s", role);
	snprintf(t->name, sizeof(t->name), "%s", name);
	if (auth_token_make(text, t->selector, t->salt, t->hash, &e) != 0)
		printf("# auth_token_make: %s\n", e.msg);
}

static void
sleep_ms(long ms)
{
	struct timespec ts = { ms / 1000, (ms % 1000) * 1000000L };

	while (nanosleep(&ts, &ts) != 0)
		;
}

static bool
loopback(const char *host)
{
	struct addrinfo hints, *ai = NULL;
	bool r;

	memset(&hints, 0, sizeof(hints));
	hints.ai_flags = AI_NUMERICHOST;
	hints.ai_socktype = SOCK_STREAM;
	if (getaddrinfo(host, "80", &hints, &ai) != 0)
		return false;
	r = auth_is_loopback(ai->ai_addr);
	freeaddrinfo(ai);
	return r;
}

/* "Bearer " + text into buf. */
static const char *
bearer(char *buf, size_t n, const char *text)
{
	snprintf(buf, n, "Bearer %s", text);
	return buf;
}

/*
 * auth_check() of a for no token and each of texts[0..2], against each
 * role of needs: reports every result that differs from want[token][need].
 */
static void
check_roles(struct auth *a, char texts[3][AUTH_TOKEN_LEN + 1],
    const enum auth_role needs[4], const int want[4][4])
{
	struct auth_who w;
	char hdr[256];
	size_t i, j;
	int r;

	for (i = 0; i < 4; i++) {
		for (j = 0; j < 4; j++) {
			struct err e2 = { 0 };

			r = auth_check(a, needs[j], i == 0 ? NULL :
			    bearer(hdr, sizeof(hdr), texts[i - 1]), &w, &e2);
			if (r != want[i][j])
				TAP_FAIL("token %zu need %s: %d, want %d", i,
				    auth_role_str(needs[j]), r, want[i][j]);
		}
	}
}

int
main(void)
{
	static const struct {
		const char *host;
		bool loopback;
	} addrs[] = {
		{ "127.0.0.1", true }, { "127.0.0.2", true },
		{ "127.255.255.254", true }, { "126.255.255.255", false },
		{ "128.0.0.1", false }, { "0.0.0.0", false },
		{ "192.0.2.1", false }, { "::1", true }, { "::", false },
		{ "::2", false }, { "::ffff:127.0.0.1", true },
		{ "::ffff:192.0.2.1", false }, { "fe80::1", false },
	};
	/* need; then, for (enforced, reads closed) = (0,0) (0,1) (1,0) (1,1),
	   whether a token is needed. */
	static const struct {
		enum auth_role need;
		bool needed[4];
	} rule[] = {
		{ AUTH_PUBLIC, { false, false, false, false } },
		{ AUTH_READ, { false, false, false, true } },
		{ AUTH_OPERATE, { false, false, true, true } },
		{ AUTH_ADMIN, { false, false, true, true } },
		{ AUTH_UNSET, { false, false, true, true } },
	};
	/* Expected auth_check() results, [token role][need]: rows none,
	   read, operate, admin; columns public, read, operate, admin.  Tokens
	   exist, loopback, reads open (auth_reads auto). */
	static const int want_open_reads[4][4] = {
		{ 0, 0, ERR_UNAUTHORIZED, ERR_UNAUTHORIZED },
		{ 0, 0, ERR_FORBIDDEN, ERR_FORBIDDEN },
		{ 0, 0, 0, ERR_FORBIDDEN },
		{ 0, 0, 0, 0 },
	};
	/* The same with auth_reads yes. */
	static const int want_closed_reads[4][4] = {
		{ 0, ERR_UNAUTHORIZED, ERR_UNAUTHORIZED, ERR_UNAUTHORIZED },
		{ 0, 0, ERR_FORBIDDEN, ERR_FORBIDDEN },
		{ 0, 0, 0, ERR_FORBIDDEN },
		{ 0, 0, 0, 0 },
	};
	static const enum auth_role needs[4] = { AUTH_PUBLIC, AUTH_READ,
	    AUTH_OPERATE, AUTH_ADMIN };
	char texts[3][AUTH_TOKEN_LEN + 1], other[AUTH_TOKEN_LEN + 1];
	char sel[AUTH_SELECTOR_LEN + 1], hdr[256], buf[200];
	char cat[AUTH_SALT_LEN + AUTH_TOKEN_LEN];
	uint8_t salt[AUTH_SALT_LEN], hash[32], want[32], salt2[AUTH_SALT_LEN];
	struct store st;
	struct auth_conf ac;
	struct auth *a = NULL;
	struct auth_who w;
	struct err e = { 0 };
	enum auth_role role;
	enum auth_reads reads;
	enum auth_mode mode;
	size_t i, j, k;

	TEST_START("127.0.0.0/8, ::1 and mapped 127/8 are loopback, nothing "
	    "else");
	for (i = 0; i < sizeof(addrs) / sizeof(addrs[0]); i++)
		if (loopback(addrs[i].host) != addrs[i].loopback)
			TAP_FAIL("%s: loopback should be %d", addrs[i].host,
			    addrs[i].loopback);
	ASSERT_TRUE(!auth_is_loopback(NULL));
	TEST_DONE();

	TEST_START("tokens are enforced once one exists, off loopback, or "
	    "always");
	ASSERT_TRUE(!auth_enforced(AUTH_MODE_AUTO, true, 0));
	ASSERT_TRUE(auth_enforced(AUTH_MODE_AUTO, true, 1));
	ASSERT_TRUE(auth_enforced(AUTH_MODE_AUTO, false, 0));
	ASSERT_TRUE(auth_enforced(AUTH_MODE_AUTO, false, 3));
	ASSERT_TRUE(auth_enforced(AUTH_MODE_ALWAYS, true, 0));
	ASSERT_TRUE(auth_enforced(AUTH_MODE_ALWAYS, false, 0));
	TEST_DONE();

	TEST_START("reads are closed by yes, or by auto off loopback");
	ASSERT_TRUE(!auth_reads_closed(AUTH_READS_AUTO, true));
	ASSERT_TRUE(auth_reads_closed(AUTH_READS_AUTO, false));
	ASSERT_TRUE(auth_reads_closed(AUTH_READS_YES, true));
	ASSERT_TRUE(auth_reads_closed(AUTH_READS_YES, false));
	ASSERT_TRUE(!auth_reads_closed(AUTH_READS_NO, true));
	ASSERT_TRUE(!auth_reads_closed(AUTH_READS_NO, false));
	TEST_DONE();

	TEST_START("which routes need a token, by role, enforcement and "
	    "reads");
	for (i = 0; i < sizeof(rule) / sizeof(rule[0]); i++)
		for (k = 0; k < 4; k++)
			if (auth_token_needed(rule[i].need, k >= 2, k % 2) !=
			    rule[i].needed[k])
				TAP_FAIL("need %d enforced %d closed %d",
				    (int)rule[i].need, k >= 2, (int)(k % 2));
	TEST_DONE();

	TEST_START("roles, modes and read settings parse; others do not");
	ASSERT_INT_EQ(auth_role_parse("read", &role), 0);
	ASSERT_INT_EQ(role, AUTH_READ);
	ASSERT_INT_EQ(auth_role_parse("operate", &role), 0);
	ASSERT_INT_EQ(role, AUTH_OPERATE);
	ASSERT_INT_EQ(auth_role_parse("admin", &role), 0);
	ASSERT_INT_EQ(role, AUTH_ADMIN);
	ASSERT_INT_EQ(auth_role_parse("public", &role), ERR_INVALID);
	ASSERT_INT_EQ(auth_role_parse("Admin", &role), ERR_INVALID);
	ASSERT_INT_EQ(auth_role_parse(NULL, &role), ERR_INVALID);
	ASSERT_STR_EQ(auth_role_str(AUTH_OPERATE), "operate");
	ASSERT_INT_EQ(auth_reads_parse("yes", &reads), 0);
	ASSERT_INT_EQ(reads, AUTH_READS_YES);
	ASSERT_INT_EQ(auth_reads_parse("maybe", &reads), ERR_INVALID);
	ASSERT_INT_EQ(auth_mode_parse("always", &mode), 0);
	ASSERT_INT_EQ(mode, AUTH_MODE_ALWAYS);
	ASSERT_INT_EQ(auth_mode_parse("never", &mode), ERR_INVALID);
	TEST_DONE();

	TEST_START("bearer headers as RFC 6750 2.1 writes them");
	ASSERT_INT_EQ(auth_bearer("Bearer abc", buf, sizeof(buf)), 0);
	ASSERT_STR_EQ(buf, "abc");
	ASSERT_INT_EQ(auth_bearer("bearer \t xyz  ", buf, sizeof(buf)), 0);
	ASSERT_STR_EQ(buf, "xyz");
	ASSERT_INT_EQ(auth_bearer("Basic abc", buf, sizeof(buf)), ERR_INVALID);
	ASSERT_INT_EQ(auth_bearer("Bearer", buf, sizeof(buf)), ERR_INVALID);
	ASSERT_INT_EQ(auth_bearer("Bearer ", buf, sizeof(buf)), ERR_INVALID);
	ASSERT_INT_EQ(auth_bearer("Bearerabc", buf, sizeof(buf)),
	    ERR_INVALID);
	ASSERT_INT_EQ(auth_bearer("Bearer a b", buf, sizeof(buf)),
	    ERR_INVALID);
	ASSERT_INT_EQ(auth_bearer("Bearer abcdef", buf, 6), ERR_INVALID);
	ASSERT_INT_EQ(auth_bearer(NULL, buf, sizeof(buf)), ERR_INVALID);
	TEST_DONE();

	TEST_START("a new token: its form, and hash = SHA-256(salt || token)");
	ASSERT_INT_EQ(auth_token_make(texts[0], sel, salt, hash, &e), 0);
	ASSERT_INT_EQ(strlen(texts[0]), 5 + 16 + 1 + 64);
	ASSERT_TRUE(strncmp(texts[0], "weft_", 5) == 0);
	ASSERT_TRUE(strncmp(texts[0] + 5, sel, 16) == 0);
	ASSERT_INT_EQ(strlen(sel), 16);
	ASSERT_TRUE(texts[0][21] == '_');
	ASSERT_INT_EQ(strspn(texts[0] + 5, "0123456789abcdef"), 16);
	ASSERT_INT_EQ(strspn(texts[0] + 22, "0123456789abcdef"), 64);
	memcpy(cat, salt, AUTH_SALT_LEN);
	memcpy(cat + AUTH_SALT_LEN, texts[0], AUTH_TOKEN_LEN);
	sha256(cat, sizeof(cat), want);
	ASSERT_TRUE(memcmp(hash, want, 32) == 0);
	/* The salt matters: the hash is not that of the token alone. */
	sha256(texts[0], AUTH_TOKEN_LEN, want);
	ASSERT_TRUE(memcmp(hash, want, 32) != 0);
	TEST_DONE();

	TEST_START("two tokens share no selector, secret or salt");
	ASSERT_INT_EQ(auth_token_make(other, buf, salt2, want, &e), 0);
	ASSERT_TRUE(strncmp(other + 5, texts[0] + 5, 16) != 0);
	ASSERT_TRUE(strcmp(other + 22, texts[0] + 22) != 0);
	ASSERT_TRUE(memcmp(salt, salt2, sizeof(salt)) != 0);
	TEST_DONE();

	memset(&st, 0, sizeof(st));
	add(&st, 1, "read", "monitor", texts[0]);
	add(&st, 2, "operate", "", texts[1]);
	add(&st, 3, "admin", "ops-admin", texts[2]);

	TEST_START("a token is found by its selector and checked by its hash");
	for (i = 0; i < 3; i++)
		ASSERT_TRUE(auth_token_find(st.toks, st.n, texts[i]) ==
		    &st.toks[i]);
	snprintf(buf, sizeof(buf), "%s", texts[1]);
	buf[AUTH_TOKEN_LEN - 1] = buf[AUTH_TOKEN_LEN - 1] == '0' ? '1' : '0';
	ASSERT_TRUE(auth_token_find(st.toks, st.n, buf) == NULL);
	/* Another token's secret under this selector. */
	snprintf(buf, sizeof(buf), "%.22s%s", texts[1], texts[2] + 22);
	ASSERT_TRUE(auth_token_find(st.toks, st.n, buf) == NULL);
	ASSERT_TRUE(auth_token_find(st.toks, st.n, other) == NULL);
	snprintf(buf, sizeof(buf), "%sx", texts[0]);
	ASSERT_TRUE(auth_token_find(st.toks, st.n, buf) == NULL);
	snprintf(buf, sizeof(buf), "%s", texts[0]);
	for (i = 22; buf[i] != '\0'; i++)
		if (buf[i] >= 'a' && buf[i] <= 'f')
			buf[i] = (char)(buf[i] - 'a' + 'A');
	if (strcmp(buf, texts[0]) != 0)
		ASSERT_TRUE(auth_token_find(st.toks, st.n, buf) == NULL);
	ASSERT_TRUE(auth_token_find(st.toks, st.n, "") == NULL);
	ASSERT_TRUE(auth_token_find(st.toks, st.n, NULL) == NULL);
	TEST_DONE();

	memset(&ac, 0, sizeof(ac));
	ac.loopback_only = true;
	ac.load = load;
	ac.load_ctx = &st;

	TEST_START("tokens exist, reads open: 401 and 403 by role");
	ac.reads = AUTH_READS_AUTO;
	ASSERT_INT_EQ(auth_new(&ac, &a, &e), 0);
	check_roles(a, texts, needs, want_open_reads);
	auth_free(a);
	a = NULL;
	TEST_DONE();

	TEST_START("tokens exist, reads closed: reads need a token too");
	ac.reads = AUTH_READS_YES;
	ASSERT_INT_EQ(auth_new(&ac, &a, &e), 0);
	check_roles(a, texts, needs, want_closed_reads);
	TEST_DONE();

	TEST_START("who: the token's name, \"token N\", anonymous, invalid");
	ASSERT_INT_EQ(auth_check(a, AUTH_READ, bearer(hdr, sizeof(hdr),
	    texts[0]), &w, NULL), 0);
	ASSERT_STR_EQ(w.who, "monitor");
	ASSERT_INT_EQ(w.token_id, 1);
	ASSERT_INT_EQ(w.role, AUTH_READ);
	ASSERT_INT_EQ(auth_check(a, AUTH_OPERATE, bearer(hdr, sizeof(hdr),
	    texts[1]), &w, NULL), 0);
	ASSERT_STR_EQ(w.who, "token 2");
	ASSERT_INT_EQ(auth_check(a, AUTH_ADMIN, NULL, &w, NULL),
	    ERR_UNAUTHORIZED);
	ASSERT_STR_EQ(w.who, "anonymous");
	ASSERT_TRUE(!w.bad_token);
	ASSERT_INT_EQ(w.token_id, 0);
	ASSERT_INT_EQ(auth_check(a, AUTH_PUBLIC, bearer(hdr, sizeof(hdr),
	    other), &w, NULL), ERR_UNAUTHORIZED);
	ASSERT_STR_EQ(w.who, "invalid");
	ASSERT_TRUE(w.bad_token);
	ASSERT_INT_EQ(auth_check(a, AUTH_READ, "Basic dTpw", &w, NULL),
	    ERR_UNAUTHORIZED);
	ASSERT_TRUE(w.bad_token);
	/* A row naming no role needs admin. */
	ASSERT_INT_EQ(auth_check(a, AUTH_UNSET, bearer(hdr, sizeof(hdr),
	    texts[1]), &w, NULL), ERR_FORBIDDEN);
	ASSERT_INT_EQ(auth_check(a, AUTH_UNSET, bearer(hdr, sizeof(hdr),
	    texts[2]), &w, NULL), 0);
	TEST_DONE();

	TEST_START("errors name the Authorization header and the role");
	err_clear(&e);
	ASSERT_INT_EQ(auth_check(a, AUTH_ADMIN, bearer(hdr, sizeof(hdr),
	    texts[1]), &w, &e), ERR_FORBIDDEN);
	ASSERT_STR_EQ(e.where, "Authorization");
	ASSERT_TRUE(strstr(e.msg, "admin") != NULL);
	ASSERT_TRUE(strstr(e.msg, "operate") != NULL);
	/* Never the token itself. */
	ASSERT_TRUE(strstr(e.msg, texts[1] + 22) == NULL);
	err_clear(&e);
	TEST_DONE();

	TEST_START("a token made after the last read is found on a miss");
	k = (size_t)st.loads;
	add(&st, 4, "admin", "late", other);
	sleep_ms((long)AUTH_RETRY_MS + 50);
	ASSERT_INT_EQ(auth_check(a, AUTH_ADMIN, bearer(hdr, sizeof(hdr),
	    other), &w, NULL), 0);
	ASSERT_INT_EQ(w.token_id, 4);
	ASSERT_TRUE((size_t)st.loads > k);
	TEST_DONE();

	TEST_START("a revoked token is refused once the list is re-read");
	st.n = 3;		/* token 4 revoked */
	sleep_ms((long)AUTH_REFRESH_MS + 50);
	ASSERT_INT_EQ(auth_check(a, AUTH_ADMIN, bearer(hdr, sizeof(hdr),
	    other), &w, NULL), ERR_UNAUTHORIZED);
	TEST_DONE();

	TEST_START("a failed re-read keeps the last list");
	st.fail = true;
	sleep_ms((long)AUTH_REFRESH_MS + 50);
	ASSERT_INT_EQ(auth_check(a, AUTH_ADMIN, bearer(hdr, sizeof(hdr),
	    texts[2]), &w, NULL), 0);
	ASSERT_INT_EQ(auth_check(a, AUTH_OPERATE, NULL, &w, NULL),
	    ERR_UNAUTHORIZED);
	st.fail = false;
	auth_free(a);
	a = NULL;
	TEST_DONE();

	TEST_START("the first start: loopback, no token: everything open");
	st.n = 0;
	ac.reads = AUTH_READS_YES;
	ASSERT_INT_EQ(auth_new(&ac, &a, &e), 0);
	for (j = 0; j < 4; j++)
		ASSERT_INT_EQ(auth_check(a, needs[j], NULL, &w, NULL), 0);
	ASSERT_STR_EQ(w.who, "local");
	/* A token sent is still checked. */
	ASSERT_INT_EQ(auth_check(a, AUTH_READ, bearer(hdr, sizeof(hdr),
	    texts[0]), &w, NULL), ERR_UNAUTHORIZED);
	auth_free(a);
	a = NULL;
	TEST_DONE();

	TEST_START("no token yet, but off loopback or always: writes refused");
	ac.loopback_only = false;
	ac.reads = AUTH_READS_AUTO;
	ASSERT_INT_EQ(auth_new(&ac, &a, &e), 0);
	ASSERT_INT_EQ(auth_check(a, AUTH_OPERATE, NULL, &w, NULL),
	    ERR_UNAUTHORIZED);
	ASSERT_INT_EQ(auth_check(a, AUTH_READ, NULL, &w, NULL),
	    ERR_UNAUTHORIZED);
	ASSERT_INT_EQ(auth_check(a, AUTH_PUBLIC, NULL, &w, NULL), 0);
	auth_free(a);
	a = NULL;
	ac.loopback_only = true;
	ac.mode = AUTH_MODE_ALWAYS;
	ASSERT_INT_EQ(auth_new(&ac, &a, &e), 0);
	ASSERT_INT_EQ(auth_check(a, AUTH_OPERATE, NULL, &w, NULL),
	    ERR_UNAUTHORIZED);
	ASSERT_INT_EQ(auth_check(a, AUTH_READ, NULL, &w, NULL), 0);
	auth_free(a);
	a = NULL;
	TEST_DONE();

	TEST_START("a checker whose first read fails is not made");
	st.fail = true;
	err_clear(&e);
	ASSERT_INT_EQ(auth_new(&ac, &a, &e), ERR_DB);
	ASSERT_TRUE(a == NULL);
	TEST_DONE();

	return tap_finish();
}
