/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The route table (an allow-list) and the matching of method and path. */

/*
 * DESIGN
 * The table is constant data, read by every HTTP thread.  Matching is a
 * linear scan: the table is short and a path has few segments.  A path
 * that matches some pattern under another method gives ERR_METHOD with the
 * Allow list, so clients can tell "no such thing" from "not like that".
 */

#include <stdio.h>
#include <string.h>
#include <strings.h>

#include "routes.h"
#include "../daemon/base/err.h"
#include "handlers.h"

#define SMALL_BODY	(16 * 1024)	/* policy and link patches */

static const struct route routes[] = {
	{ "GET", "/v1/health", h_health, BODY_NONE, 0, AUTH_READ },
	{ "GET", "/v1/topology", h_topology_get, BODY_NONE, 0, AUTH_READ },
	{ "PUT", "/v1/topology", h_topology_put, BODY_JSON, ROUTE_BODY_CONF,
	    AUTH_ADMIN },
	{ "GET", "/v1/links/{id}", h_link_get, BODY_NONE, 0, AUTH_READ },
	{ "PATCH", "/v1/links/{id}", h_link_patch, BODY_JSON, SMALL_BODY,
	    AUTH_OPERATE },
	{ "GET", "/v1/matrices", h_matrices_list, BODY_NONE, 0, AUTH_READ },
	{ "GET", "/v1/matrices/{name}", h_matrix_get, BODY_NONE, 0, AUTH_READ },
	{ "PUT", "/v1/matrices/{name}", h_matrix_put, BODY_JSON,
	    ROUTE_BODY_CONF, AUTH_OPERATE },
	{ "DELETE", "/v1/matrices/{name}", h_matrix_delete, BODY_NONE, 0,
	    AUTH_OPERATE },
	{ "GET", "/v1/policy", h_policy_get, BODY_NONE, 0, AUTH_READ },
	{ "PUT", "/v1/policy", h_policy_put, BODY_JSON, SMALL_BODY,
	    AUTH_ADMIN },
	{ "POST", "/v1/import", h_import, BODY_FILE, ROUTE_BODY_CONF,
	    AUTH_ADMIN },
	{ "GET", "/v1/plan", h_plan_summary, BODY_NONE, 0, AUTH_READ },
	{ "GET", "/v1/plan/routes", h_plan_routes, BODY_NONE, 0, AUTH_READ },
	{ "GET", "/v1/plan/loads", h_plan_loads, BODY_NONE, 0, AUTH_READ },
	{ "GET", "/v1/plan/forwarding", h_plan_forwarding, BODY_NONE, 0,
	    AUTH_READ },
	{ "GET", "/v1/plan/diff", h_plan_diff, BODY_NONE, 0, AUTH_READ },
	{ "GET", "/v1/model", h_model_export, BODY_NONE, 0, AUTH_READ },
	{ "GET", "/v1/snapshot", h_snapshot, BODY_NONE, 0, AUTH_READ },
	{ "POST", "/v1/whatif", h_whatif, BODY_JSON, ROUTE_BODY_CONF,
	    AUTH_OPERATE },
	{ "POST", "/v1/sweeps", h_sweep_start, BODY_JSON, SMALL_BODY,
	    AUTH_OPERATE },
	{ "GET", "/v1/sweeps", h_sweeps_list, BODY_NONE, 0, AUTH_READ },
	{ "GET", "/v1/sweeps/{id}", h_sweep_get, BODY_NONE, 0, AUTH_READ },
	{ "DELETE", "/v1/sweeps/{id}", h_sweep_delete, BODY_NONE, 0,
	    AUTH_OPERATE },
	{ "POST", "/v1/sweeps/{id}/cancel", h_sweep_cancel, BODY_NONE, 0,
	    AUTH_OPERATE },
	{ "GET", "/v1/sweeps/{id}/results.csv", h_sweep_results_csv, BODY_NONE,
	    0, AUTH_READ },
	{ "GET", "/v1/sweeps/{id}/links.csv", h_sweep_links_csv, BODY_NONE, 0,
	    AUTH_READ },
	{ "GET", "/", h_web_index, BODY_NONE, 0, AUTH_PUBLIC },
	{ "GET", "/ui/{file}", h_web_file, BODY_NONE, 0, AUTH_PUBLIC },
	{ "GET", "/v1/sweeps/{id}/report.svg", h_sweep_report_svg, BODY_NONE, 0,
	    AUTH_READ },
	{ "GET", "/metrics", h_metrics, BODY_NONE, 0, AUTH_READ },
	{ "GET", "/v1/events", h_events, BODY_NONE, 0, AUTH_READ },
};

/*
 * Matches path against pattern; on a match copies the {name} segment into
 * param.  Returns 1 on a match, 0 otherwise.
 */
static int
match(const char *pattern, const char *path, char *param, size_t param_size)
{
	const char *p = pattern, *s = path;
	size_t n;

	param[0] = '\0';
	while (*p != '\0') {
		if (*p == '{') {
			n = strcspn(s, "/");
			if (n == 0 || n >= param_size)
				return 0;
			memcpy(param, s, n);
			param[n] = '\0';
			s += n;
			p = strchr(p, '}');
			if (p == NULL)
				return 0;
			p++;
			continue;
		}
		if (*p != *s)
			return 0;
		p++;
		s++;
	}
	return *s == '\0';
}

int
routes_match(const char *method, const char *path, const struct route **rp,
    char *param, size_t param_size, char *allow, size_t allow_size,
    struct err *e)
{
	size_t i, len;
	bool path_known = false;

	*rp = NULL;
	if (allow_size > 0)
		allow[0] = '\0';
	for (i = 0; i < sizeof(routes) / sizeof(routes[0]); i++) {
		if (!match(routes[i].pattern, path, param, param_size))
			continue;
		if (strcmp(routes[i].method, method) == 0) {
			*rp = &routes[i];
			/* Allow goes only with a 405. */
			if (allow_size > 0)
				allow[0] = '\0';
			return 0;
		}
		path_known = true;
		len = strlen(allow);
		snprintf(allow + len, allow_size - len, "%s%s",
		    len > 0 ? ", " : "", routes[i].method);
	}
	param[0] = '\0';
	if (path_known)
		return err_set(e, ERR_METHOD, "method",
		    "%.16s is not allowed here; allowed: %s", method, allow);
	return err_set(e, ERR_NOTFOUND, "path", "no such resource");
}

/* Compares the media type at s (up to ';' or blanks) with want. */
static bool
is_type(const char *s, size_t n, const char *want)
{
	return strlen(want) == n && strncasecmp(s, want, n) == 0;
}

int
routes_check_ctype(const struct route *ro, const char *ctype, struct err *e)
{
	const char *p, *semi;
	size_t n;

	if (ro->body == BODY_NONE)
		return 0;
	if (ctype == NULL)
		return err_set(e, ERR_MEDIATYPE, "Content-Type",
		    "a Content-Type header is required");
	p = ctype + strspn(ctype, " \t");
	semi = strchr(p, ';');
	n = semi != NULL ? (size_t)(semi - p) : strlen(p);
	while (n > 0 && (p[n - 1] == ' ' || p[n - 1] == '\t'))
		n--;
	if (ro->body == BODY_JSON) {
		if (!is_type(p, n, "application/json"))
			goto bad;
		/* The only parameter JSON has is charset, and only UTF-8. */
		for (; semi != NULL; semi = strchr(semi + 1, ';')) {
			p = semi + 1 + strspn(semi + 1, " \t");
			n = strcspn(p, "; \t");
			if (!is_type(p, n, "charset=utf-8") &&
			    !is_type(p, n, "charset=\"utf-8\""))
				return err_set(e, ERR_MEDIATYPE,
				    "Content-Type", "JSON bodies must be "
				    "UTF-8 with no other parameter");
		}
		return 0;
	}
	if (is_type(p, n, "text/plain") || is_type(p, n, "text/csv") ||
	    is_type(p, n, "application/octet-stream"))
		return 0;
bad:
	return err_set(e, ERR_MEDIATYPE, "Content-Type",
	    "this route takes %s, not \"%.64s\"", ro->body == BODY_JSON ?
	    "application/json" : "text/plain, text/csv or "
	    "application/octet-stream", ctype);
}
