/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The option table and its readers: config file, command line, dump. */

/*
 * DESIGN
 * One table gives each option's key, type, field, default, range and help
 * line.  Every field starts unset; the command line is applied first (it
 * wins), then the file fills what it names and is still unset, then the
 * defaults fill the rest.  Read-only after start-up.
 */

#include <ctype.h>
#include <errno.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"
#include "base/err.h"
#include "base/xalloc.h"

enum opt_type {
	OPT_STR,
	OPT_LONG,
};

static const struct option_def {
	const char *key;
	enum opt_type type;
	size_t off;
	const char *def;
	long min, max;
	const char *help;
} options[] = {
	{ "db", OPT_STR, offsetof(struct config, db), "weft.db", 0, 0,
	    "SQLite database file (created if missing)" },
	{ "listen", OPT_STR, offsetof(struct config, listen), "127.0.0.1:8470",
	    0, 0, "address and port to serve HTTP on" },
	{ "log_level", OPT_STR, offsetof(struct config, log_level), "info", 0,
	    0, "error, warn, info or debug" },
	{ "debounce_ms", OPT_LONG, offsetof(struct config, debounce_ms), "50",
	    0, 60000, "quiet time after a change before re-solving, ms" },
	{ "solve_time_limit_s", OPT_LONG,
	    offsetof(struct config, solve_time_limit_s), "600", 0, 86400,
	    "time limit of one solve, s (0: none)" },
	{ "max_body_bytes", OPT_LONG, offsetof(struct config, max_body_bytes),
	    "33554432", 1024, 1L << 30, "largest request body accepted, bytes" },
	{ "max_connections", OPT_LONG,
	    offsetof(struct config, max_connections), "256", 1, 65536,
	    "open HTTP connections in total" },
	{ "per_client_connections", OPT_LONG,
	    offsetof(struct config, per_client_connections), "64", 1, 65536,
	    "open HTTP connections per client address" },
	{ "request_timeout_s", OPT_LONG,
	    offsetof(struct config, request_timeout_s), "60", 1, 3600,
	    "idle HTTP connection timeout, s" },
	{ "http_threads", OPT_LONG, offsetof(struct config, http_threads), "4",
	    1, 256, "HTTP worker threads" },
	{ "plan_history", OPT_LONG, offsetof(struct config, plan_history),
	    "1000", 1, 1000000, "plan summaries kept in the database" },
	{ "workers", OPT_LONG, offsetof(struct config, workers), "2", 1, 256,
	    "threads for what-ifs and sweep scenarios" },
	{ "whatif_queue", OPT_LONG, offsetof(struct config, whatif_queue),
	    "2", 0, 10000, "what-ifs that may wait when every worker is busy" },
	{ "whatif_time_limit_s", OPT_LONG,
	    offsetof(struct config, whatif_time_limit_s), "30", 1, 86400,
	    "time limit of one what-if or sweep scenario, s" },
	{ "sweep_max_scenarios", OPT_LONG,
	    offsetof(struct config, sweep_max_scenarios), "5000", 1, 10000000,
	    "most scenarios one sweep may have" },
	{ "long_poll_max", OPT_LONG, offsetof(struct config, long_poll_max),
	    "1000", 0, 100000,
	    "GET /v1/plan?wait= polls that may wait at once" },
	{ "long_poll_max_s", OPT_LONG,
	    offsetof(struct config, long_poll_max_s), "300", 1, 86400,
	    "longest wait a long poll may ask for, s" },
	{ "events_max", OPT_LONG, offsetof(struct config, events_max), "64",
	    0, 10000, "GET /v1/events streams open at once" },
	{ "events_keepalive_s", OPT_LONG,
	    offsetof(struct config, events_keepalive_s), "15", 1, 3600,
	    "keep-alive comment interval of event streams, s" },
	{ "auth", OPT_STR, offsetof(struct config, auth), "auto", 0, 0,
	    "when tokens are needed: auto (once one exists, or off "
	    "loopback) or always" },
	{ "auth_reads", OPT_STR, offsetof(struct config, auth_reads), "auto",
	    0, 0, "whether reads need a token: auto (off loopback), yes, no" },
	{ "tls_cert", OPT_STR, offsetof(struct config, tls_cert), "", 0, 0,
	    "PEM certificate file: serve HTTPS (with tls_key)" },
	{ "tls_key", OPT_STR, offsetof(struct config, tls_key), "", 0, 0,
	    "PEM private key file of tls_cert" },
};

#define N_OPTIONS	(sizeof(options) / sizeof(options[0]))
#define CONFIG_LINE_MAX	1024	/* bytes of one line with its newline */
#define CONFIG_FILE_MAX	(1 << 20)	/* bytes of a config file */

static char **
str_field(struct config *c, const struct option_def *o)
{
	return (char **)(void *)((char *)c + o->off);
}

static long *
long_field(struct config *c, const struct option_def *o)
{
	return (long *)(void *)((char *)c + o->off);
}

static const struct option_def *
find_option(const char *key)
{
	char norm[64];
	size_t i;

	for (i = 0; key[i] != '\0' && i < sizeof(norm) - 1; i++)
		norm[i] = key[i] == '-' ? '_' : key[i];
	norm[i] = '\0';
	for (i = 0; i < N_OPTIONS; i++)
		if (strcmp(options[i].key, norm) == 0)
			return &options[i];
	return NULL;
}

void
config_init(struct config *c)
{
	size_t i;

	memset(c, 0, sizeof(*c));
	for (i = 0; i < N_OPTIONS; i++)
		if (options[i].type == OPT_LONG)
			*long_field(c, &options[i]) = -1;
}

void
config_clear(struct config *c)
{
	size_t i;

	for (i = 0; i < N_OPTIONS; i++) {
		if (options[i].type == OPT_STR) {
			free(*str_field(c, &options[i]));
			*str_field(c, &options[i]) = NULL;
		}
	}
}

static int
set_value(struct config *c, const struct option_def *o, const char *value,
    bool only_unset, const char *where, struct err *e)
{
	char *end;
	long v;

	if (o->type == OPT_STR) {
		if (only_unset && *str_field(c, o) != NULL)
			return 0;
		if (value[0] == '\0')
			return err_set(e, ERR_INVALID, where,
			    "%s: empty value", o->key);
		free(*str_field(c, o));
		*str_field(c, o) = xstrdup(value);
		return 0;
	}
	if (only_unset && *long_field(c, o) != -1)
		return 0;
	errno = 0;
	v = strtol(value, &end, 10);
	if (errno != 0 || end == value || *end != '\0')
		return err_set(e, ERR_INVALID, where, "%s: not an integer: %.40s",
		    o->key, value);
	if (v < o->min || v > o->max)
		return err_set(e, ERR_INVALID, where,
		    "%s: %ld is outside %ld..%ld", o->key, v, o->min, o->max);
	*long_field(c, o) = v;
	return 0;
}

int
config_set(struct config *c, const char *key, const char *value,
    const char *where, struct err *e)
{
	const struct option_def *o;

	if ((o = find_option(key)) == NULL)
		return err_set(e, ERR_NOTFOUND, where, "unknown option %.64s",
		    key);
	return set_value(c, o, value, false, where, e);
}

/*
 * Reads a file of at most CONFIG_FILE_MAX bytes into a new buffer (*textp,
 * the caller frees it) of *lenp bytes.
 */
static int
slurp(const char *path, char **textp, size_t *lenp, struct err *e)
{
	char *text = NULL;
	size_t len = 0, cap = 0, n;
	FILE *f;
	int r;

	*textp = NULL;
	*lenp = 0;
	if ((f = fopen(path, "r")) == NULL)
		return err_set(e, ERR_IO, path, "cannot open: %s",
		    strerror(errno));
	for (;;) {
		if (len == cap) {
			cap = cap == 0 ? 4096 : cap * 2;
			text = xreallocarray(text, cap, 1);
		}
		if ((n = fread(text + len, 1, cap - len, f)) == 0)
			break;
		if ((len += n) > CONFIG_FILE_MAX) {
			r = err_set(e, ERR_INVALID, path, "larger than %d "
			    "bytes", CONFIG_FILE_MAX);
			goto out;
		}
	}
	if (ferror(f)) {
		r = err_set(e, ERR_IO, path, "cannot read: %s",
		    strerror(errno));
		goto out;
	}
	*textp = text;
	*lenp = len;
	text = NULL;
	r = 0;
out:
	free(text);
	fclose(f);
	return r;
}

int
config_read_file(struct config *c, const char *path, struct err *e)
{
	char *text;
	size_t len;
	int r;

	if ((r = slurp(path, &text, &len, e)) != 0)
		return r;
	r = config_read_text(c, text, len, path, e);
	free(text);
	return r;
}

int
config_read_text(struct config *c, const char *text, size_t len,
    const char *name, struct err *e)
{
	const struct option_def *o;
	char line[CONFIG_LINE_MAX], where[ERR_WHERE_MAX];
	const char *nl;
	char *key, *value, *p;
	size_t pos = 0, n, lineno = 0;
	int r;

	while (pos < len) {
		lineno++;
		snprintf(where, sizeof(where), "%s:%zu", name, lineno);
		nl = memchr(text + pos, '\n', len - pos);
		n = (nl != NULL ? (size_t)(nl - text) : len) - pos;
		/* As fgets() into CONFIG_LINE_MAX bytes with the newline. */
		if (n >= sizeof(line) - 1)
			return err_set(e, ERR_INVALID, where, "line too long");
		if (memchr(text + pos, '\0', n) != NULL)
			return err_set(e, ERR_INVALID, where, "NUL byte in "
			    "line");
		memcpy(line, text + pos, n);
		line[n] = '\0';
		pos += n + (nl != NULL ? 1 : 0);
		if ((p = strchr(line, '#')) != NULL)
			*p = '\0';
		key = line;
		while (isspace((unsigned char)*key))
			key++;
		if (*key == '\0')
			continue;
		value = key;
		while (*value != '\0' && !isspace((unsigned char)*value))
			value++;
		if (*value != '\0')
			*value++ = '\0';
		while (isspace((unsigned char)*value))
			value++;
		p = value + strlen(value);
		while (p > value && isspace((unsigned char)p[-1]))
			*--p = '\0';
		if ((o = find_option(key)) == NULL)
			return err_set(e, ERR_INVALID, where, "unknown option "
			    "%.64s", key);
		if ((r = set_value(c, o, value, true, where, e)) != 0)
			return r;
	}
	return 0;
}

void
config_defaults(struct config *c)
{
	size_t i;

	for (i = 0; i < N_OPTIONS; i++)
		(void)set_value(c, &options[i], options[i].def, true, NULL, NULL);
}

void
config_dump(const struct config *c, FILE *f)
{
	struct config *cc = (struct config *)(uintptr_t)c;
	size_t i;

	for (i = 0; i < N_OPTIONS; i++) {
		if (options[i].type == OPT_STR)
			fprintf(f, "%s %s\n", options[i].key,
			    *str_field(cc, &options[i]) != NULL ?
			    *str_field(cc, &options[i]) : "");
		else
			fprintf(f, "%s %ld\n", options[i].key,
			    *long_field(cc, &options[i]));
	}
}

void
config_help(FILE *f)
{
	size_t i;

	for (i = 0; i < N_OPTIONS; i++) {
		if (options[i].type == OPT_LONG)
			fprintf(f, "  --%-24s %s (default %s, %ld..%ld)\n",
			    options[i].key, options[i].help, options[i].def,
			    options[i].min, options[i].max);
		else
			fprintf(f, "  --%-24s %s (default %s)\n",
			    options[i].key, options[i].help,
			    options[i].def[0] != '\0' ? options[i].def : "none");
	}
}
