/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Bearer tokens: roles, the token text, its hash, and who may do what. */
#ifndef WEFT_API_AUTH_H
#define WEFT_API_AUTH_H

/*
 * DESIGN
 * Roles are ordered: admin may do what operate may, operate what read
 * may.  Each route names the role it needs (api/routes.c); public routes
 * (the map page's files) need none.
 *
 * A token is "weft_" + selector (16 hex digits) + "_" + secret (64 hex
 * digits, 256 random bits from getrandom()).  Only the selector, a random
 * 16-byte salt and SHA-256(salt || token text) are stored (storage/
 * auth.c): the selector finds the row, so checking a token costs one
 * hash, compared in constant time.
 *
 * The rule (auth_token_needed): while the daemon listens on loopback only,
 * the mode is "auto" and no valid token exists, nothing needs a token (the
 * first start).  Otherwise every route that needs operate or admin needs
 * a token of at least that role, and reads need a read token when reads
 * are closed: auth_reads "yes", or "auto" on a non-loopback address.  A
 * token that is sent is always checked, also where none is needed: a bad
 * one is refused.
 *
 * struct auth keeps a snapshot of the valid tokens, under its own mutex,
 * read through the loader the caller gives (the service's database
 * connection).  Tokens are added and revoked by another process (weftd
 * token), so the snapshot is re-read when it is older than
 * AUTH_REFRESH_MS, and at once (at most every AUTH_RETRY_MS) when a token
 * is not found in it.  Any HTTP thread may call auth_check().
 */

#include <sys/socket.h>

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

struct db_token;
struct err;

#define AUTH_REFRESH_MS	1000.0	/* snapshot age that triggers a re-read */
#define AUTH_RETRY_MS	100.0	/* least time between re-reads on misses */

enum auth_role {
	AUTH_UNSET = 0,		/* a route row that names no role: taken as
				   AUTH_ADMIN, so a forgotten role fails
				   closed */
	AUTH_PUBLIC = 1,	/* no token needed, ever */
	AUTH_READ = 2,
	AUTH_OPERATE = 3,
	AUTH_ADMIN = 4,
};

/* When reads need a token (config auth_reads). */
enum auth_reads {
	AUTH_READS_AUTO = 0,	/* on a non-loopback address only */
	AUTH_READS_YES = 1,	/* whenever tokens are enforced */
	AUTH_READS_NO = 2,	/* never */
};

/* When tokens are enforced (config auth). */
enum auth_mode {
	AUTH_MODE_AUTO = 0,	/* once a token exists, or off loopback */
	AUTH_MODE_ALWAYS = 1,	/* always, even before a token exists */
};

/* "read", "operate", "admin" ("public" for AUTH_PUBLIC). */
const char *auth_role_str(enum auth_role r);

/* Parses read, operate or admin: 0, or ERR_INVALID. */
int auth_role_parse(const char *s, enum auth_role *rp);

/* Parse auto|yes|no and auto|always: 0, or ERR_INVALID. */
int auth_reads_parse(const char *s, enum auth_reads *rp);
int auth_mode_parse(const char *s, enum auth_mode *mp);

/* True for 127.0.0.0/8, ::1 and ::ffff:127.0.0.0/104. */
bool auth_is_loopback(const struct sockaddr *sa);

/* ---- the rule, as pure functions ---- */

/* Are tokens enforced, given the mode, the address and the tokens? */
bool auth_enforced(enum auth_mode mode, bool loopback_only, size_t n_tokens);

/* Do reads need a token when tokens are enforced? */
bool auth_reads_closed(enum auth_reads reads, bool loopback_only);

/*
 * Does a request for a route needing need (AUTH_UNSET counts as
 * AUTH_ADMIN) have to carry a token?
 */
bool auth_token_needed(enum auth_role need, bool enforced,
    bool reads_closed);

/* ---- token text and hash ---- */

#define AUTH_PREFIX		"weft_"
#define AUTH_SELECTOR_LEN	16	/* hex digits */
#define AUTH_SECRET_LEN		64	/* hex digits: 256 bits */
#define AUTH_SALT_LEN		16	/* bytes */
#define AUTH_TOKEN_LEN		(5 + AUTH_SELECTOR_LEN + 1 + AUTH_SECRET_LEN)

/*
 * Makes a new token from getrandom(): its text (AUTH_TOKEN_LEN characters
 * and a NUL), its selector (with a NUL), a new salt and the hash.
 * Returns 0, or ERR_IO when the system has no randomness to give.
 */
int auth_token_make(char text[AUTH_TOKEN_LEN + 1],
    char selector[AUTH_SELECTOR_LEN + 1], uint8_t salt[AUTH_SALT_LEN],
    uint8_t hash[32], struct err *e);

/* hash = SHA-256(salt || text), text without its NUL. */
void auth_token_hash(const uint8_t salt[AUTH_SALT_LEN], const char *text,
    uint8_t hash[32]);

/*
 * Finds the token of text among toks[0..n) and checks its hash.  Returns
 * the matching entry, or NULL (malformed, unknown selector, wrong secret).
 */
const struct db_token *auth_token_find(const struct db_token *toks,
    size_t n, const char *text);

/*
 * Takes the token out of an Authorization header value ("Bearer TOKEN",
 * scheme case-insensitive, RFC 6750 2.1) into text (size n).  Returns 0,
 * or ERR_INVALID when it is not a bearer token that fits.
 */
int auth_bearer(const char *header, char *text, size_t n);

/* ---- the checker ---- */

/* Reads the valid tokens into a new array (free()) of *np. */
typedef int auth_load_fn(void *ctx, struct db_token **tp, size_t *np,
    struct err *e);

struct auth_conf {
	enum auth_mode mode;
	enum auth_reads reads;
	bool loopback_only;	/* the listen address is a loopback one */
	auth_load_fn *load;
	void *load_ctx;		/* borrowed for the checker's life */
};

struct auth;

/* Who sent a request, as auth_check() found out. */
struct auth_who {
	char who[80];		/* token name, "token N"; without a token
				   "local" (none needed) or "anonymous";
				   "invalid" for a refused token */
	int64_t token_id;	/* 0: no token accepted */
	enum auth_role role;	/* the token's; AUTH_PUBLIC without one */
	bool bad_token;		/* a token was sent and refused */
};

/*
 * Makes a checker and reads the tokens once: 0 and *ap, or the loader's
 * error.  Called once, at start-up.
 */
int auth_new(const struct auth_conf *c, struct auth **ap, struct err *e);

/* Frees a (NULL ok). */
void auth_free(struct auth *a);

/*
 * Decides a request for a route needing need, with Authorization header
 * value authorization (NULL when absent).  Returns 0 (allowed), or
 * ERR_UNAUTHORIZED (no token where one is needed, or a bad token) /
 * ERR_FORBIDDEN (the token's role is below need), with detail in e.
 * *w says who it was in every case.  Any thread.
 */
int auth_check(struct auth *a, enum auth_role need, const char *authorization,
    struct auth_who *w, struct err *e);

/* Valid tokens in the snapshot now (for the log and tests). */
size_t auth_tokens(struct auth *a);

#endif /* WEFT_API_AUTH_H */
