/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What the weft client's files share: the options in force, exit codes. */
#ifndef WEFT_CLIENT_CLIENT_H
#define WEFT_CLIENT_CLIENT_H

/*
 * DESIGN
 * weft is a command-line client of weftd's HTTP API (docs/api.md) with an
 * offline mode that solves a network file with the daemon's own engine.
 * main.c reads the global options, finds the command in its table and
 * hands it the rest of the command line.  A command returns the process's
 * exit code (RC_*), not an ERR_* code: the exit codes are the client's
 * contract with scripts (docs/weft.1), and each command settles its code
 * where it learns the outcome.  Results go to stdout; messages for people
 * go to stderr, one line each, prefixed "weft: ".  One thread throughout.
 */

#include <stdbool.h>

/* Exit codes (docs/weft.1, EXIT STATUS). */
enum {
	RC_OK = 0,		/* done */
	RC_USAGE = 1,		/* bad command line, unreadable local file */
	RC_REFUSED = 2,		/* the daemon refused (4xx), the thing named
				   does not exist, or a file does not parse */
	RC_FAILED = 3,		/* the daemon failed (5xx), could not be
				   reached or timed out; a solve failed */
	RC_PARTIAL = 4,		/* done, but the plan reported leaves
				   traffic unserved */
};

/* The global options, read once by main.c; read-only afterwards. */
struct cli {
	const char *url;	/* daemon base URL, no trailing '/' */
	const char *token;	/* bearer token, NULL when none */
	double timeout_s;	/* limit of one request, s */
	bool json;		/* print JSON instead of tables */
	bool tty;		/* stdout is a terminal */
};

/*
 * A command: argv holds the arguments after the command's words (argc of
 * them, the global options removed).  Returns an exit code.
 */
typedef int cmd_fn(const struct cli *c, int argc, char **argv);

cmd_fn cmd_status;		/* cmd_status.c */
cmd_fn cmd_loads;		/* cmd_loads.c */
cmd_fn cmd_routes;		/* cmd_routes.c */
cmd_fn cmd_link_show, cmd_link_up, cmd_link_down;	/* cmd_link.c */
cmd_fn cmd_matrix_list, cmd_matrix_put, cmd_matrix_rm;	/* cmd_matrix.c */
cmd_fn cmd_import;		/* cmd_import.c */
cmd_fn cmd_policy;		/* cmd_policy.c */
cmd_fn cmd_whatif;		/* cmd_whatif.c */
cmd_fn cmd_sweep_start, cmd_sweep_list, cmd_sweep_cancel,
    cmd_sweep_rm;		/* cmd_sweep.c */
cmd_fn cmd_sweep_watch;		/* sweep_watch.c */
cmd_fn cmd_sweep_report;	/* sweep_report.c */
cmd_fn cmd_snapshot;		/* cmd_snapshot.c */
cmd_fn cmd_solve;		/* cmd_solve.c (offline) */

/* Writes "weft: <message>\n" to stderr. */
void msg(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* As msg(), then returns RC_USAGE: "return msg_usage(...)". */
int msg_usage(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

#endif /* WEFT_CLIENT_CLIENT_H */
