/* SPDX-License-Identifier: GPL-3.0-or-later */
/* One HTTP request to weftd and its JSON answer (the only libcurl user). */
#ifndef WEFT_CLIENT_FETCH_H
#define WEFT_CLIENT_FETCH_H

/*
 * DESIGN
 * Every request of the client goes through fetch(): it sends one request
 * to c->url plus a path, waits at most c->timeout_s, reads the body (at
 * most FETCH_BODY_MAX bytes) and sorts the outcome into the exit codes:
 * 2xx with a JSON body is RC_OK; 4xx is RC_REFUSED and 5xx, no answer, a
 * timeout or a body that is not JSON are RC_FAILED, each after one line
 * on stderr quoting the daemon's error (docs/api.md, Errors); a 401 or
 * 403 adds a line on the token.  c->token, when set, goes with every
 * request as "Authorization: Bearer".  One curl handle is kept for the
 * life of the process, so a polling loop reuses its connection.  One
 * thread.
 */

#include <stddef.h>

#include <jansson.h>

struct cli;

#define FETCH_BODY_MAX	(1UL << 30)	/* largest reply read, bytes */

struct answer {
	long status;		/* HTTP status; 0 when none came */
	char *text;		/* owned: the body, NUL-terminated */
	size_t len;		/* its length without the NUL */
	json_t *json;		/* owned: the body parsed; NULL if not JSON */
};

/*
 * Sends method path (path starts with "/v1/"; ids in it escaped with
 * fetch_escape()) with body[0 .. len-1] of type ctype when body is not
 * NULL.  Fills *ap (clear it with answer_clear(), also after an error)
 * and returns RC_OK, RC_REFUSED or RC_FAILED as above.
 */
int fetch(const struct cli *c, const char *method, const char *path,
    const char *ctype, const char *body, size_t len, struct answer *ap);

/* As fetch() for a GET. */
int fetch_get(const struct cli *c, const char *path, struct answer *ap);

/* As fetch() with a JSON body made from j (not stolen). */
int fetch_json(const struct cli *c, const char *method, const char *path,
    const json_t *j, struct answer *ap);

/* Frees what *ap owns and empties it. */
void answer_clear(struct answer *ap);

/* Prints the answer's body to stdout as it came, ending with a newline. */
void answer_print(const struct answer *ap);

/* s percent-encoded for a path segment; the caller frees it. */
char *fetch_escape(const char *s);

/* Frees the curl handle; called once before the process exits. */
void fetch_done(void);

#endif /* WEFT_CLIENT_FETCH_H */
