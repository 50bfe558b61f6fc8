/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weftd's configuration: one option table drives file, command line, -T. */
#ifndef WEFT_DAEMON_CONFIG_H
#define WEFT_DAEMON_CONFIG_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

struct err;

struct config {
	char *db;		/* owned: SQLite database file */
	char *listen;		/* owned: host:port to listen on */
	char *log_level;	/* owned: error, warn, info, debug */
	long debounce_ms;	/* quiet time before a re-solve, ms */
	long solve_time_limit_s;	/* per solve; 0 = no limit */
	long max_body_bytes;	/* largest request body accepted */
	long max_connections;	/* open connections in total */
	long per_client_connections;	/* open connections per address */
	long request_timeout_s;	/* idle connection timeout */
	long http_threads;	/* HTTP worker threads */
	long plan_history;	/* plan summaries kept in SQLite */
	long workers;		/* what-if and sweep threads */
	long whatif_queue;	/* what-ifs that may wait for a worker */
	long whatif_time_limit_s;	/* per what-if or sweep scenario */
	long sweep_max_scenarios;	/* largest sweep accepted */
	long long_poll_max;	/* long polls waiting at once */
	long long_poll_max_s;	/* longest wait a long poll may ask, s */
	long events_max;	/* event streams open at once */
	long events_keepalive_s;	/* event stream keep-alive interval */
	char *auth;		/* owned: auto, always (api/auth.h) */
	char *auth_reads;	/* owned: auto, yes, no */
	char *tls_cert;		/* owned: PEM certificate file; NULL: HTTP */
	char *tls_key;		/* owned: PEM private key file */
};

/* Sets every field to "unset" (NULL strings, -1 numbers). */
void config_init(struct config *c);

/* Frees the strings c owns. */
void config_clear(struct config *c);

/*
 * Reads "key value" lines from path (# starts a comment; a line is at
 * most 1022 bytes, the file at most 1 MiB) into the fields still unset.
 * An unknown key or a bad value is ERR_INVALID with where "path:line";
 * a file that cannot be read is ERR_IO.
 */
int config_read_file(struct config *c, const char *path, struct err *e);

/*
 * As config_read_file() on text[0 .. len-1] (need not be NUL-terminated;
 * a NUL byte in it is ERR_INVALID), with where "name:line".
 */
int config_read_text(struct config *c, const char *text, size_t len,
    const char *name, struct err *e);

/*
 * Sets key (dashes and underscores are the same) to value, checking type
 * and range.  ERR_NOTFOUND for an unknown key, ERR_INVALID for a bad
 * value.  Later calls override earlier ones.
 */
int config_set(struct config *c, const char *key, const char *value,
    const char *where, struct err *e);

/* Fills every field still unset with its default. */
void config_defaults(struct config *c);

/* Prints the effective configuration as "key value" lines. */
void config_dump(const struct config *c, FILE *f);

/* Prints one line per option: key, default, range and help. */
void config_help(FILE *f);

#endif /* WEFT_DAEMON_CONFIG_H */
