/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The route table: which method and path reach which handler, with limits. */
#ifndef WEFT_API_ROUTES_H
#define WEFT_API_ROUTES_H

/*
 * DESIGN
 * The table in routes.c is an allow-list: a request reaches a handler only
 * through a row naming its method and path pattern.  A pattern is literal
 * segments plus at most one "{name}" segment, captured into req->param
 * (1..REQ_PARAM_MAX-1 bytes, no '/').  Each row also says what body the
 * route takes: none, JSON (Content-Type application/json) or a file
 * (text/plain, text/csv, application/octet-stream), its size limit, and
 * the role a bearer token needs for it (api/auth.h: reads read, the
 * operator's writes operate, topology, policy and import admin; the map
 * page's files none).
 */

#include <stdbool.h>
#include <stddef.h>

#include "auth.h"

struct err;
struct req;

/*
 * A handler: reads rq, calls the service, sets a reply with api/reply.h
 * and returns 0; or returns an error code with detail in e, and the caller
 * replies with reply_error().
 */
typedef int route_fn(struct req *rq, struct err *e);

enum route_body {
	BODY_NONE = 0,		/* no body allowed */
	BODY_JSON = 1,		/* application/json */
	BODY_FILE = 2,		/* text/plain, text/csv, application/octet-stream */
};

#define ROUTE_BODY_CONF	((size_t)-1)	/* body limit: the configured max */

struct route {
	const char *method;	/* "GET", "PUT", ... */
	const char *pattern;	/* "/v1/matrices/{name}" */
	route_fn *fn;
	enum route_body body;
	size_t body_max;	/* bytes, or ROUTE_BODY_CONF */
	enum auth_role role;	/* the role a token needs (api/auth.h) */
};

/*
 * Finds the route for method and path.  Returns 0 with *rp set and the
 * {name} segment (if any) copied into param; ERR_NOTFOUND when no pattern
 * matches the path; ERR_METHOD when patterns match but none with this
 * method, with the allowed methods written into allow ("GET, PUT").
 * Detail in e.
 */
int routes_match(const char *method, const char *path, const struct route **rp,
    char *param, size_t param_size, char *allow, size_t allow_size,
    struct err *e);

/*
 * Checks a request Content-Type against what route ro takes: 0, or
 * ERR_MEDIATYPE with detail.  ctype may be NULL (absent).
 */
int routes_check_ctype(const struct route *ro, const char *ctype,
    struct err *e);

#endif /* WEFT_API_ROUTES_H */
