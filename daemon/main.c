/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weftd: start-up order, signal handling and shutdown; the only exit. */

/*
 * DESIGN
 * Start-up: parse the command line (it wins), read the config file if one
 * is named, fill defaults, open the database and start the solver thread
 * (service_start), then serve HTTP.  The main thread then only waits for
 * SIGINT or SIGTERM (sigwait: all other threads are started with these
 * signals blocked), stops HTTP first so no new write arrives, then stops
 * the solver.  fatal() ends the process only during start-up.  Under
 * systemd (Type=notify) readiness is sent once HTTP listens, STOPPING=1
 * when the signal comes, and a watchdog thread keeps the manager's
 * watchdog fed while the daemon answers (sdnotify.h).  "weftd backup"
 * copies a database online and exits (storage/backup.h).
 */

#include <pthread.h>
#include <signal.h>
#include <stdbool.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"
#include "sdnotify.h"
#include "service.h"
#include "tokencmd.h"
#include "base/err.h"
#include "base/log.h"
#include "../api/auth.h"
#include "../api/http.h"
#include "../storage/backup.h"

static void __attribute__((noreturn, format(printf, 1, 2)))
fatal(const char *fmt, ...)
{
	va_list ap;

	fprintf(stderr, "weftd: fatal: ");
	va_start(ap, fmt);
	vfprintf(stderr, fmt, ap);
	va_end(ap);
	fprintf(stderr, "\n");
	exit(1);
}

static void __attribute__((noreturn))
usage(int code)
{
	fprintf(code == 0 ? stdout : stderr,
	    "usage: weftd [-dhtT] [-f file] [--db file] [--listen host:port]\n"
	    "             [--option value ...]\n"
	    "       weftd backup --db file --to file\n"
	    "       weftd token add --db file --role read|operate|admin "
	    "[--name name]\n"
	    "       weftd token list --db file\n"
	    "       weftd token revoke --db file id\n"
	    "  -f file  read options from file (\"key value\" lines)\n"
	    "  -t       check the configuration and exit\n"
	    "  -T       print the effective configuration and exit\n"
	    "  -d       debug log to stderr\n"
	    "options (also valid as file keys, with _ for -):\n");
	config_help(code == 0 ? stdout : stderr);
	exit(code);
}

/*
 * weftd backup --db file --to file: an online copy of the database, safe
 * while a daemon uses it (storage/backup.h).
 */
static int
cmd_backup(int argc, char **argv)
{
	struct db_backup_info info;
	struct err e = { 0 };
	const char *db = NULL, *to = NULL;
	int i;

	for (i = 1; i < argc; i++) {
		if (strncmp(argv[i], "--db=", 5) == 0)
			db = argv[i] + 5;
		else if (strncmp(argv[i], "--to=", 5) == 0)
			to = argv[i] + 5;
		else if (strcmp(argv[i], "--db") == 0 && i + 1 < argc)
			db = argv[++i];
		else if (strcmp(argv[i], "--to") == 0 && i + 1 < argc)
			to = argv[++i];
		else
			usage(2);
	}
	if (db == NULL || to == NULL || *db == '\0' || *to == '\0')
		usage(2);
	if (db_backup(db, to, &info, &e) != 0)
		fatal("backup of %s: %s", db, e.msg);
	printf("backup of %s written to %s: model revision %lld, schema "
	    "version %ld, %ld pages of %ld bytes, integrity ok\n", db, to,
	    (long long)info.model_revision, info.schema_version, info.pages,
	    info.page_size);
	return 0;
}

/* Short aliases kept for convenience on the command line. */
static const char *
alias(const char *key)
{
	if (strcmp(key, "max-body") == 0)
		return "max_body_bytes";
	return key;
}

int
main(int argc, char **argv)
{
	struct service_conf sc;
	struct http_conf hc;
	struct config c;
	struct service *svc = NULL;
	struct http *http = NULL;
	struct watchdog *wd = NULL;
	struct err e = { 0 };
	enum log_level lvl;
	enum auth_mode auth_mode;
	enum auth_reads auth_reads;
	const char *file = NULL;
	bool check = false, dump = false, debug = false;
	sigset_t sigs;
	int i, sig;

	if (argc > 1 && strcmp(argv[1], "token") == 0)
		return tokencmd_main(argc - 1, argv + 1);
	if (argc > 1 && strcmp(argv[1], "backup") == 0)
		return cmd_backup(argc - 1, argv + 1);
	config_init(&c);
	for (i = 1; i < argc; i++) {
		const char *a = argv[i];

		if (strcmp(a, "-h") == 0 || strcmp(a, "--help") == 0)
			usage(0);
		else if (strcmp(a, "-t") == 0)
			check = true;
		else if (strcmp(a, "-T") == 0)
			dump = true;
		else if (strcmp(a, "-d") == 0)
			debug = true;
		else if (strcmp(a, "-f") == 0 && i + 1 < argc)
			file = argv[++i];
		else if (strncmp(a, "--", 2) == 0 && a[2] != '\0') {
			const char *key = a + 2, *eq = strchr(key, '=');
			char kbuf[64];

			if (eq != NULL) {
				snprintf(kbuf, sizeof(kbuf), "%.*s",
				    (int)(eq - key), key);
				if (config_set(&c, alias(kbuf), eq + 1, a,
				    &e) != 0)
					fatal("%s: %s", e.where, e.msg);
				continue;
			}
			if (i + 1 >= argc)
				fatal("option %s needs a value", a);
			if (config_set(&c, alias(key), argv[i + 1], a, &e) != 0)
				fatal("%s: %s", e.where, e.msg);
			i++;
		} else
			usage(2);
	}
	if (file != NULL && config_read_file(&c, file, &e) != 0)
		fatal("%s: %s", e.where, e.msg);
	config_defaults(&c);
	if (log_level_parse(c.log_level, &lvl) != 0)
		fatal("log_level: unknown level %s", c.log_level);
	log_set_level(debug ? LOG_LVL_DEBUG : lvl);
	if (auth_mode_parse(c.auth, &auth_mode) != 0)
		fatal("auth: %s is not auto or always", c.auth);
	if (auth_reads_parse(c.auth_reads, &auth_reads) != 0)
		fatal("auth_reads: %s is not auto, yes or no", c.auth_reads);
	if ((c.tls_cert != NULL) != (c.tls_key != NULL))
		fatal("tls_cert and tls_key go together");
	if (dump) {
		config_dump(&c, stdout);
		exit(0);
	}
	if (check) {
		printf("configuration ok\n");
		exit(0);
	}

	/* Threads inherit this mask; only the main thread takes signals. */
	sigemptyset(&sigs);
	sigaddset(&sigs, SIGINT);
	sigaddset(&sigs, SIGTERM);
	pthread_sigmask(SIG_BLOCK, &sigs, NULL);
	signal(SIGPIPE, SIG_IGN);

	memset(&sc, 0, sizeof(sc));
	sc.db_path = c.db;
	sc.debounce_ms = (int)c.debounce_ms;
	sc.solve_time_limit_s = (double)c.solve_time_limit_s;
	sc.plan_history_keep = (int)c.plan_history;
	sc.workers = (int)c.workers;
	sc.whatif_queue = (int)c.whatif_queue;
	sc.whatif_time_limit_s = (double)c.whatif_time_limit_s;
	sc.sweep_max_scenarios = c.sweep_max_scenarios;
	sc.long_poll_max = (int)c.long_poll_max;
	sc.long_poll_max_s = (double)c.long_poll_max_s;
	sc.events_max = (int)c.events_max;
	sc.events_keepalive_s = (int)c.events_keepalive_s;
	if (service_start(&sc, &svc, &e) != 0)
		fatal("database %s: %s", c.db, e.msg);

	memset(&hc, 0, sizeof(hc));
	hc.listen = c.listen;
	hc.max_body_bytes = (size_t)c.max_body_bytes;
	hc.max_connections = (unsigned)c.max_connections;
	hc.per_ip_limit = (unsigned)c.per_client_connections;
	hc.timeout_s = (unsigned)c.request_timeout_s;
	hc.threads = (unsigned)c.http_threads;
	hc.auth_mode = auth_mode;
	hc.auth_reads = auth_reads;
	hc.tls_cert = c.tls_cert;
	hc.tls_key = c.tls_key;
	if (http_start(&hc, svc, &http, &e) != 0) {
		service_stop(svc);
		fatal("listen %s: %s", c.listen, e.msg);
	}
	log_info("serving listen=%s db=%s", c.listen, c.db);
	sdnotify_ready(c.listen, c.db);
	if (watchdog_start(svc, c.listen, c.tls_cert != NULL,
	    (double)c.solve_time_limit_s, &wd, &e) != 0)
		log_err("watchdog not started msg=\"%s\"", e.msg);

	while (sigwait(&sigs, &sig) != 0 || (sig != SIGINT && sig != SIGTERM))
		;
	log_info("stopping signal=%d", sig);
	watchdog_stop(wd);
	sdnotify_stopping();
	/*
	 * Deferred requests (what-ifs, long polls) are answered and event
	 * streams ended before the server stops: libmicrohttpd must not
	 * be stopped with a connection still suspended.
	 */
	service_quiesce(svc);
	http_stop(http);
	service_stop(svc);
	config_clear(&c);
	return 0;
}
