/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Bearer tokens: the rule, the token text and hash, the checker's cache. */

#include <sys/random.h>
#include <sys/socket.h>

#include <errno.h>
#include <netinet/in.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "auth.h"
#include "../daemon/base/clock.h"
#include "../daemon/base/err.h"
#include "../daemon/base/log.h"
#include "../daemon/base/sha256.h"
#include "../daemon/base/xalloc.h"
#include "../storage/db.h"

struct auth {
	struct auth_conf conf;
	pthread_mutex_t mu;
	struct db_token *toks;	/* owned, under mu: the valid tokens */
	size_t n;		/* under mu */
	double loaded_ms;	/* under mu: clock_ms() of the last read */
};

static const char *const role_names[] = {
	[AUTH_UNSET] = "admin",
	[AUTH_PUBLIC] = "public",
	[AUTH_READ] = "read",
	[AUTH_OPERATE] = "operate",
	[AUTH_ADMIN] = "admin",
};

const char *
auth_role_str(enum auth_role r)
{
	return r >= AUTH_UNSET && r <= AUTH_ADMIN ? role_names[r] : "?";
}

int
auth_role_parse(const char *s, enum auth_role *rp)
{
	int r;

	for (r = AUTH_READ; r <= AUTH_ADMIN; r++) {
		if (s != NULL && strcmp(s, role_names[r]) == 0) {
			*rp = (enum auth_role)r;
			return 0;
		}
	}
	return ERR_INVALID;
}

int
auth_reads_parse(const char *s, enum auth_reads *rp)
{
	if (s == NULL)
		return ERR_INVALID;
	if (strcmp(s, "auto") == 0)
		*rp = AUTH_READS_AUTO;
	else if (strcmp(s, "yes") == 0)
		*rp = AUTH_READS_YES;
	else if (strcmp(s, "no") == 0)
		*rp = AUTH_READS_NO;
	else
		return ERR_INVALID;
	return 0;
}

int
auth_mode_parse(const char *s, enum auth_mode *mp)
{
	if (s == NULL)
		return ERR_INVALID;
	if (strcmp(s, "auto") == 0)
		*mp = AUTH_MODE_AUTO;
	else if (strcmp(s, "always") == 0)
		*mp = AUTH_MODE_ALWAYS;
	else
		return ERR_INVALID;
	return 0;
}

bool
auth_is_loopback(const struct sockaddr *sa)
{
	const struct sockaddr_in *s4;
	const struct sockaddr_in6 *s6;
	const uint8_t *b;

	if (sa == NULL)
		return false;
	if (sa->sa_family == AF_INET) {
		s4 = (const struct sockaddr_in *)(const void *)sa;
		return (ntohl(s4->sin_addr.s_addr) >> 24) == 127;
	}
	if (sa->sa_family != AF_INET6)
		return false;
	s6 = (const struct sockaddr_in6 *)(const void *)sa;
	if (IN6_IS_ADDR_LOOPBACK(&s6->sin6_addr))
		return true;
	b = s6->sin6_addr.s6_addr;
	return IN6_IS_ADDR_V4MAPPED(&s6->sin6_addr) && b[12] == 127;
}

/* ---- the rule ---- */

bool
auth_enforced(enum auth_mode mode, bool loopback_only, size_t n_tokens)
{
	return mode == AUTH_MODE_ALWAYS || !loopback_only || n_tokens > 0;
}

bool
auth_reads_closed(enum auth_reads reads, bool loopback_only)
{
	return reads == AUTH_READS_YES ||
	    (reads == AUTH_READS_AUTO && !loopback_only);
}

bool
auth_token_needed(enum auth_role need, bool enforced, bool reads_closed)
{
	if (need == AUTH_UNSET)
		need = AUTH_ADMIN;
	if (need == AUTH_PUBLIC || !enforced)
		return false;
	if (need == AUTH_READ)
		return reads_closed;
	return true;
}

/* ---- token text and hash ---- */

static int
fill_random(void *p, size_t n, struct err *e)
{
	uint8_t *b = p;
	ssize_t got;

	while (n > 0) {
		got = getrandom(b, n, 0);
		if (got < 0 && errno == EINTR)
			continue;
		if (got <= 0)
			return err_set(e, ERR_IO, NULL, "getrandom: %s",
			    strerror(errno));
		b += got;
		n -= (size_t)got;
	}
	return 0;
}

static void
hex(const uint8_t *b, size_t n, char *out)
{
	static const char digits[] = "0123456789abcdef";
	size_t i;

	for (i = 0; i < n; i++) {
		out[2 * i] = digits[b[i] >> 4];
		out[2 * i + 1] = digits[b[i] & 15];
	}
	out[2 * n] = '\0';
}

void
auth_token_hash(const uint8_t salt[AUTH_SALT_LEN], const char *text,
    uint8_t hash[32])
{
	struct sha256 c;

	sha256_init(&c);
	sha256_update(&c, salt, AUTH_SALT_LEN);
	sha256_update(&c, text, strlen(text));
	sha256_final(&c, hash);
}

int
auth_token_make(char text[AUTH_TOKEN_LEN + 1],
    char selector[AUTH_SELECTOR_LEN + 1], uint8_t salt[AUTH_SALT_LEN],
    uint8_t hash[32], struct err *e)
{
	uint8_t sel[AUTH_SELECTOR_LEN / 2], secret[AUTH_SECRET_LEN / 2];
	char secret_hex[AUTH_SECRET_LEN + 1];
	int r;

	text[0] = '\0';
	selector[0] = '\0';
	if ((r = fill_random(sel, sizeof(sel), e)) != 0 ||
	    (r = fill_random(secret, sizeof(secret), e)) != 0 ||
	    (r = fill_random(salt, AUTH_SALT_LEN, e)) != 0)
		return r;
	hex(sel, sizeof(sel), selector);
	hex(secret, sizeof(secret), secret_hex);
	snprintf(text, AUTH_TOKEN_LEN + 1, "%s%s_%s", AUTH_PREFIX, selector,
	    secret_hex);
	auth_token_hash(salt, text, hash);
	explicit_bzero(secret, sizeof(secret));
	explicit_bzero(secret_hex, sizeof(secret_hex));
	return 0;
}

static bool
all_hex(const char *s, size_t n)
{
	size_t i;

	for (i = 0; i < n; i++)
		if (!((s[i] >= '0' && s[i] <= '9') ||
		    (s[i] >= 'a' && s[i] <= 'f')))
			return false;
	return true;
}

const struct db_token *
auth_token_find(const struct db_token *toks, size_t n, const char *text)
{
	const char *sel, *secret;
	uint8_t hash[32];
	size_t i, plen = strlen(AUTH_PREFIX);

	if (text == NULL || strlen(text) != AUTH_TOKEN_LEN ||
	    strncmp(text, AUTH_PREFIX, plen) != 0)
		return NULL;
	sel = text + plen;
	secret = sel + AUTH_SELECTOR_LEN + 1;
	if (!all_hex(sel, AUTH_SELECTOR_LEN) || sel[AUTH_SELECTOR_LEN] != '_' ||
	    !all_hex(secret, AUTH_SECRET_LEN))
		return NULL;
	/* The selector is public: finding the row need not be constant-time. */
	for (i = 0; i < n; i++) {
		if (strncmp(toks[i].selector, sel, AUTH_SELECTOR_LEN) != 0 ||
		    toks[i].selector[AUTH_SELECTOR_LEN] != '\0')
			continue;
		auth_token_hash(toks[i].salt, text, hash);
		return sha256_equal(hash, toks[i].hash, sizeof(hash)) ?
		    &toks[i] : NULL;
	}
	return NULL;
}

int
auth_bearer(const char *header, char *text, size_t n)
{
	const char *p;
	size_t len;

	if (header == NULL || strncasecmp(header, "Bearer", 6) != 0 ||
	    (header[6] != ' ' && header[6] != '\t'))
		return ERR_INVALID;
	p = header + 6;
	p += strspn(p, " \t");
	len = strcspn(p, " \t");
	if (len == 0 || len >= n || p[len + strspn(p + len, " \t")] != '\0')
		return ERR_INVALID;
	memcpy(text, p, len);
	text[len] = '\0';
	return 0;
}

/* ---- the checker ---- */

/* Re-reads the snapshot; keeps the old one on failure.  Under a->mu. */
static int
reload(struct auth *a, struct err *e)
{
	struct db_token *t = NULL;
	size_t n = 0, i;
	enum auth_role role;
	int r;

	a->loaded_ms = clock_ms();
	if ((r = a->conf.load(a->conf.load_ctx, &t, &n, e)) != 0)
		return r;
	/* A row with a role we do not know is no token of ours. */
	for (i = 0; i < n; i++)
		if (auth_role_parse(t[i].role, &role) != 0)
			t[i].selector[0] = '\0';
	free(a->toks);
	a->toks = t;
	a->n = n;
	return 0;
}

int
auth_new(const struct auth_conf *c, struct auth **ap, struct err *e)
{
	struct auth *a;
	int r;

	*ap = NULL;
	a = xcalloc(1, sizeof(*a));
	a->conf = *c;
	pthread_mutex_init(&a->mu, NULL);
	if ((r = reload(a, e)) != 0) {
		auth_free(a);
		return r;
	}
	*ap = a;
	return 0;
}

void
auth_free(struct auth *a)
{
	if (a == NULL)
		return;
	free(a->toks);
	pthread_mutex_destroy(&a->mu);
	free(a);
}

size_t
auth_tokens(struct auth *a)
{
	size_t n;

	pthread_mutex_lock(&a->mu);
	n = a->n;
	pthread_mutex_unlock(&a->mu);
	return n;
}

/* Refreshes a stale snapshot (under a->mu); a failure is only logged. */
static void
refresh(struct auth *a, double older_than_ms)
{
	struct err e = { 0 };

	if (clock_ms() - a->loaded_ms < older_than_ms)
		return;
	if (reload(a, &e) != 0)
		log_warn("tokens not re-read, the last list stays in use "
		    "msg=\"%s\"", e.msg);
}

int
auth_check(struct auth *a, enum auth_role need, const char *authorization,
    struct auth_who *w, struct err *e)
{
	const struct db_token *t = NULL;
	char text[AUTH_TOKEN_LEN + 2] = "";
	enum auth_role role = AUTH_PUBLIC;
	bool enforced, sent = authorization != NULL;

	if (need == AUTH_UNSET)
		need = AUTH_ADMIN;

	memset(w, 0, sizeof(*w));
	snprintf(w->who, sizeof(w->who), "local");
	pthread_mutex_lock(&a->mu);
	refresh(a, AUTH_REFRESH_MS);
	if (sent && auth_bearer(authorization, text, sizeof(text)) == 0) {
		t = auth_token_find(a->toks, a->n, text);
		if (t == NULL) {
			/* Perhaps made since the last read. */
			refresh(a, AUTH_RETRY_MS);
			t = auth_token_find(a->toks, a->n, text);
		}
	}
	if (t != NULL) {
		(void)auth_role_parse(t->role, &role);
		w->role = role;
		w->token_id = t->id;
		if (t->name[0] != '\0')
			snprintf(w->who, sizeof(w->who), "%s", t->name);
		else
			snprintf(w->who, sizeof(w->who), "token %lld",
			    (long long)t->id);
	}
	enforced = auth_enforced(a->conf.mode, a->conf.loopback_only, a->n);
	pthread_mutex_unlock(&a->mu);
	explicit_bzero(text, sizeof(text));
	if (!sent && enforced)
		snprintf(w->who, sizeof(w->who), "anonymous");

	if (sent && t == NULL) {
		w->bad_token = true;
		snprintf(w->who, sizeof(w->who), "invalid");
		return err_set(e, ERR_UNAUTHORIZED, "Authorization", "the "
		    "bearer token is malformed, unknown or revoked");
	}
	if (!auth_token_needed(need, enforced,
	    auth_reads_closed(a->conf.reads, a->conf.loopback_only)))
		return 0;
	if (!sent)
		return err_set(e, ERR_UNAUTHORIZED, "Authorization", "this "
		    "request needs a bearer token with the %s role",
		    auth_role_str(need));
	if (role < need)
		return err_set(e, ERR_FORBIDDEN, "Authorization", "this "
		    "request needs the %s role; the token has %s",
		    auth_role_str(need), auth_role_str(role));
	return 0;
}
