/* SPDX-License-Identifier: GPL-3.0-or-later */
/* One HTTP request to weftd and its JSON answer (the only libcurl user). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <curl/curl.h>
#include <jansson.h>

#include "fetch.h"
#include "client.h"
#include "js.h"
#include "../../daemon/base/xalloc.h"

static CURL *handle;		/* kept between requests; fetch_done() */
static char errbuf[CURL_ERROR_SIZE];	/* the handle's error text */

struct sink {
	char *buf;		/* owned until handed to the answer */
	size_t len, cap;
	bool too_big;
};

static size_t
collect(char *data, size_t size, size_t n, void *arg)
{
	struct sink *s = arg;
	size_t add = size * n;

	if (add > FETCH_BODY_MAX - s->len) {
		s->too_big = true;
		return 0;	/* curl stops with CURLE_WRITE_ERROR */
	}
	if (s->len + add + 1 > s->cap) {
		while (s->len + add + 1 > s->cap)
			s->cap = s->cap == 0 ? 4096 : 2 * s->cap;
		s->buf = xreallocarray(s->buf, s->cap, 1);
	}
	memcpy(s->buf + s->len, data, add);
	s->len += add;
	s->buf[s->len] = '\0';
	return add;
}

/* The daemon's error body, or the status alone, on one stderr line. */
static void
say_error(const char *method, const char *path, const struct answer *a,
    const char *what)
{
	json_t *e = js_obj(a->json, "error");
	const char *where = js_str(e, "where", "");

	if (e == NULL) {
		msg("%s: %s %s: HTTP %ld", what, method, path, a->status);
		return;
	}
	msg("%s: %s %s: %ld %s: %s%s%s%s", what, method, path, a->status,
	    js_str(e, "code", "?"), js_str(e, "message", ""),
	    where[0] != '\0' ? " (at " : "", where,
	    where[0] != '\0' ? ")" : "");
}

/* After a 401 or 403 (docs/api.md, Authentication): what to do about it. */
static void
say_auth(const struct cli *c, long status)
{
	if (status == 401 && c->token == NULL)
		msg("the daemon wants a bearer token: give one with --token "
		    "or WEFT_TOKEN");
	else if (status == 401)
		msg("the daemon did not accept the token given (--token or "
		    "WEFT_TOKEN): it is unknown or revoked");
	else if (status == 403)
		msg("the token given (--token or WEFT_TOKEN) has a role too "
		    "low for this request");
}

int
fetch(const struct cli *c, const char *method, const char *path,
    const char *ctype, const char *body, size_t len, struct answer *ap)
{
	struct curl_slist *hdrs = NULL;
	struct sink s = { 0 };
	char *url = NULL, *h = NULL, *auth = NULL;
	CURLcode cr;
	long ms;
	int r;

	r = RC_FAILED;
	memset(ap, 0, sizeof(*ap));
	if (handle == NULL && (handle = curl_easy_init()) == NULL) {
		msg("cannot start libcurl");
		goto out;
	}
	curl_easy_reset(handle);
	url = xasprintf("%s%s", c->url, path);
	ms = (long)ceil(c->timeout_s * 1000);
	errbuf[0] = '\0';
	/* Expect: 100-continue would only delay small bodies. */
	hdrs = curl_slist_append(hdrs, "Expect:");
	hdrs = curl_slist_append(hdrs, "Accept: application/json");
	if (c->token != NULL) {
		auth = xasprintf("Authorization: Bearer %s", c->token);
		hdrs = curl_slist_append(hdrs, auth);
	}
	if (body != NULL) {
		h = xasprintf("Content-Type: %s", ctype);
		hdrs = curl_slist_append(hdrs, h);
		curl_easy_setopt(handle, CURLOPT_POSTFIELDS, body);
		curl_easy_setopt(handle, CURLOPT_POSTFIELDSIZE_LARGE,
		    (curl_off_t)len);
	}
	curl_easy_setopt(handle, CURLOPT_URL, url);
	curl_easy_setopt(handle, CURLOPT_CUSTOMREQUEST, method);
	if (strcmp(method, "GET") == 0)
		curl_easy_setopt(handle, CURLOPT_HTTPGET, 1L);
	curl_easy_setopt(handle, CURLOPT_HTTPHEADER, hdrs);
	curl_easy_setopt(handle, CURLOPT_USERAGENT, "weft/1");
	/* "": every coding this libcurl decodes (gzip, deflate): the plan
	   lists of a large network shrink about tenfold. */
	curl_easy_setopt(handle, CURLOPT_ACCEPT_ENCODING, "");
	curl_easy_setopt(handle, CURLOPT_TIMEOUT_MS, ms);
	curl_easy_setopt(handle, CURLOPT_CONNECTTIMEOUT_MS,
	    ms < 10000 ? ms : 10000L);
	curl_easy_setopt(handle, CURLOPT_NOSIGNAL, 1L);
	/*
	 * libcurl honours http_proxy; a daemon on this machine is never
	 * reached through one, unless no_proxy says otherwise.
	 */
	if (getenv("no_proxy") == NULL && getenv("NO_PROXY") == NULL)
		curl_easy_setopt(handle, CURLOPT_NOPROXY,
		    "localhost,127.0.0.1,::1");
	curl_easy_setopt(handle, CURLOPT_WRITEFUNCTION, collect);
	curl_easy_setopt(handle, CURLOPT_WRITEDATA, &s);
	curl_easy_setopt(handle, CURLOPT_ERRORBUFFER, errbuf);
	cr = curl_easy_perform(handle);
	if (cr != CURLE_OK) {
		if (s.too_big)
			msg("%s %s: the reply is larger than %lu bytes", method,
			    path, FETCH_BODY_MAX);
		else if (cr == CURLE_OPERATION_TIMEDOUT)
			msg("%s %s: no answer from %s within %g s", method,
			    path, c->url, c->timeout_s);
		else
			msg("cannot reach the daemon at %s: %s", c->url,
			    errbuf[0] != '\0' ? errbuf :
			    curl_easy_strerror(cr));
		goto out;
	}
	curl_easy_getinfo(handle, CURLINFO_RESPONSE_CODE, &ap->status);
	ap->text = s.buf != NULL ? s.buf : xstrdup("");
	ap->len = s.len;
	s.buf = NULL;
	ap->json = json_loadb(ap->text, ap->len, JSON_DECODE_ANY, NULL);
	if (ap->status >= 400 && ap->status < 500) {
		say_error(method, path, ap, "refused");
		say_auth(c, ap->status);
		r = RC_REFUSED;
	} else if (ap->status >= 500) {
		/* 503 is busy or a timeout: worth a retry (Retry-After). */
		say_error(method, path, ap, ap->status == 503 ?
		    "the daemon cannot answer now" : "the daemon failed");
		r = RC_FAILED;
	} else if (ap->status < 200 || ap->status > 299)
		msg("%s %s: unexpected HTTP status %ld", method, path,
		    ap->status);
	else if (ap->json == NULL)
		msg("%s %s: the reply is not JSON", method, path);
	else
		r = RC_OK;
out:
	/* The handle must not keep pointers to this call's memory. */
	if (handle != NULL)
		curl_easy_reset(handle);
	curl_slist_free_all(hdrs);
	free(s.buf);
	free(url);
	free(h);
	if (auth != NULL) {
		explicit_bzero(auth, strlen(auth));
		free(auth);
	}
	return r;
}

int
fetch_get(const struct cli *c, const char *path, struct answer *ap)
{
	return fetch(c, "GET", path, NULL, NULL, 0, ap);
}

int
fetch_json(const struct cli *c, const char *method, const char *path,
    const json_t *j, struct answer *ap)
{
	char *body;
	int r;

	body = json_dumps(j, JSON_COMPACT | JSON_REAL_PRECISION(17));
	if (body == NULL) {
		memset(ap, 0, sizeof(*ap));
		msg("cannot write the request's JSON");
		return RC_FAILED;
	}
	r = fetch(c, method, path, "application/json", body, strlen(body), ap);
	free(body);
	return r;
}

void
answer_clear(struct answer *ap)
{
	free(ap->text);
	json_decref(ap->json);
	memset(ap, 0, sizeof(*ap));
}

void
answer_print(const struct answer *ap)
{
	if (ap->text == NULL)
		return;
	fwrite(ap->text, 1, ap->len, stdout);
	if (ap->len == 0 || ap->text[ap->len - 1] != '\n')
		fputc('\n', stdout);
}

char *
fetch_escape(const char *s)
{
	char *e, *out;
	size_t i, n;

	/* Without a handle, curl_easy_escape() still works (NULL ok). */
	if ((e = curl_easy_escape(handle, s, 0)) != NULL) {
		out = xstrdup(e);
		curl_free(e);
		return out;
	}
	/* Out of memory inside libcurl: escape by hand. */
	n = strlen(s);
	out = xcalloc(3 * n + 1, 1);
	for (i = 0; i < n; i++)
		snprintf(out + 3 * i, 4, "%%%02X", (unsigned char)s[i]);
	return out;
}

void
fetch_done(void)
{
	if (handle != NULL)
		curl_easy_cleanup(handle);
	handle = NULL;
}
