/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weft: the command-line client of weftd; global options and dispatch. */

/*
 * DESIGN
 * The global options (--url, --token, --json, --timeout) may stand
 * anywhere on the command line before "--"; they are taken out first, so
 * every command sees only its own words.  A command is one word or two
 * ("sweep watch"); the table below maps them to their functions and holds
 * each usage line, printed by "weft help" and by --help after any command.
 * The daemon's address comes from --url, else WEFT_URL, else
 * DEFAULT_URL; the bearer token from --token, else WEFT_TOKEN, else there
 * is none (fetch.c sends it with every request).  Exit codes are listed
 * in client.h and docs/weft.1.
 */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <curl/curl.h>

#include "client.h"
#include "fetch.h"
#include "opt.h"
#include "../../daemon/base/xalloc.h"

#define DEFAULT_URL		"http://127.0.0.1:8470"
#define DEFAULT_TIMEOUT_S	60.0

static const struct command {
	const char *word;	/* first word */
	const char *action;	/* second word, NULL when there is none */
	cmd_fn *fn;
	const char *usage;	/* what follows the words */
} commands[] = {
	{ "status", NULL, cmd_status, "" },
	{ "loads", NULL, cmd_loads, "[--top N] [--ascending]" },
	{ "routes", NULL, cmd_routes, "SRC DST" },
	{ "link", "show", cmd_link_show, "ID" },
	{ "link", "down", cmd_link_down, "ID [--wait]" },
	{ "link", "up", cmd_link_up, "ID [--wait]" },
	{ "matrix", "list", cmd_matrix_list, "" },
	{ "matrix", "put", cmd_matrix_put,
	    "NAME FILE [--format json|csv] [--wait]" },
	{ "matrix", "rm", cmd_matrix_rm, "NAME" },
	{ "import", NULL, cmd_import,
	    "FILE [--format sndlib|csv] [--matrix NAME] [--use] [--wait]" },
	{ "policy", NULL, cmd_policy,
	    "[--objective cost|balance|congestion] [--headroom H]\n"
	    "                [--matrix NAME | --no-matrix] "
	    "[--formulation path|arc|potential]\n"
	    "                [--gap-target G] [--keep-paths yes|no] [--wait]" },
	{ "whatif", NULL, cmd_whatif,
	    "[--fail-link ID]... [--fail-node ID]... [--fail-srlg N]...\n"
	    "                [--scale F] [--matrix NAME] "
	    "[--objective O] [--headroom H]\n"
	    "                [--formulation F] [--time-limit S] [--top N]" },
	{ "sweep", "start", cmd_sweep_start,
	    "links|nodes|srlgs|link-pairs [--scale F] [--time-limit S]\n"
	    "                [--watch] [--interval S]" },
	{ "sweep", "watch", cmd_sweep_watch, "ID [--interval S]" },
	{ "sweep", "report", cmd_sweep_report, "ID [--top N]" },
	{ "sweep", "list", cmd_sweep_list, "" },
	{ "sweep", "cancel", cmd_sweep_cancel, "ID" },
	{ "sweep", "rm", cmd_sweep_rm, "ID" },
	{ "snapshot", NULL, cmd_snapshot, "[--output FILE]" },
	{ "solve", NULL, cmd_solve,
	    "FILE [--format sndlib|csv] [--objective O] [--headroom H]\n"
	    "                [--formulation path|arc|potential] [--time-limit S] "
	    "[--loads [--top N]]" },
};

#define N_COMMANDS	(sizeof(commands) / sizeof(commands[0]))

static void
usage_line(const struct command *cmd, FILE *f)
{
	fprintf(f, "  weft %s%s%s%s%s\n", cmd->word,
	    cmd->action != NULL ? " " : "",
	    cmd->action != NULL ? cmd->action : "",
	    cmd->usage[0] != '\0' ? " " : "", cmd->usage);
}

static void
usage(FILE *f)
{
	size_t i;

	fprintf(f, "usage: weft [--url URL] [--token TOKEN] [--json] "
	    "[--timeout S]\n"
	    "            command [argument ...]\n"
	    "commands:\n");
	for (i = 0; i < N_COMMANDS; i++)
		usage_line(&commands[i], f);
	fprintf(f, "  weft help\n"
	    "The daemon is at --url, else $WEFT_URL, else %s.\n"
	    "A bearer token is sent from --token, else $WEFT_TOKEN.\n"
	    "Exit status: 0 ok, 1 usage, 2 refused (4xx), 3 failed or "
	    "unreachable,\n"
	    "4 the plan reported leaves traffic unserved.  See weft(1).\n",
	    DEFAULT_URL);
}

/*
 * A token goes into a header line as it is: it must be one word of
 * printable ASCII.  Returns 0 or RC_USAGE (the token is not printed).
 */
static int
token_ok(const char *from, const char *tok)
{
	const char *p;

	if (tok[0] == '\0')
		return msg_usage("%s: the token is empty", from);
	for (p = tok; *p != '\0'; p++)
		if (*p <= ' ' || *p > '~')
			return msg_usage("%s: the token must be printable "
			    "ASCII without blanks", from);
	return 0;
}

/*
 * Takes the global options out of argv (before "--"), filling c; the
 * other arguments stay in order in argv[0 .. *argcp-1].  Returns 0 or
 * RC_USAGE.
 */
static int
globals(struct cli *c, int *argcp, char **argv)
{
	const char *a, *val;
	int i, n = 0, argc = *argcp, r;
	bool rest = false;

	for (i = 0; i < argc; i++) {
		a = argv[i];
		if (rest || strcmp(a, "--") == 0) {
			rest = true;
			argv[n++] = argv[i];
			continue;
		}
		if (strcmp(a, "--json") == 0) {
			c->json = true;
			continue;
		}
		val = NULL;
		if (strncmp(a, "--url=", 6) == 0 ||
		    strncmp(a, "--token=", 8) == 0 ||
		    strncmp(a, "--timeout=", 10) == 0)
			val = strchr(a, '=') + 1;
		else if (strcmp(a, "--url") == 0 ||
		    strcmp(a, "--token") == 0 ||
		    strcmp(a, "--timeout") == 0) {
			if (i + 1 == argc)
				return msg_usage("option %s needs a value", a);
			val = argv[++i];
		} else {
			argv[n++] = argv[i];
			continue;
		}
		if (a[2] == 'u')
			c->url = val;
		else if (strncmp(a, "--token", 7) == 0) {
			if ((r = token_ok("--token", val)) != 0)
				return r;
			c->token = val;
		} else if ((r = opt_num("--timeout", val, 0.001, 86400,
		    &c->timeout_s)) != 0)
			return r;
	}
	*argcp = n;
	return 0;
}

/* The command named by argv[0] (and argv[1]); *wordsp: how many words. */
static const struct command *
find(int argc, char **argv, int *wordsp)
{
	size_t i;
	bool known = false;

	for (i = 0; i < N_COMMANDS; i++) {
		if (strcmp(commands[i].word, argv[0]) != 0)
			continue;
		known = true;
		if (commands[i].action == NULL) {
			*wordsp = 1;
			return &commands[i];
		}
		if (argc > 1 && strcmp(commands[i].action, argv[1]) == 0) {
			*wordsp = 2;
			return &commands[i];
		}
	}
	if (!known) {
		msg("unknown command \"%s\"; \"weft help\" lists them",
		    argv[0]);
		return NULL;
	}
	msg("%s needs one of:", argv[0]);
	for (i = 0; i < N_COMMANDS; i++)
		if (strcmp(commands[i].word, argv[0]) == 0)
			usage_line(&commands[i], stderr);
	return NULL;
}

static bool
wants_help(int argc, char **argv)
{
	int i;

	for (i = 0; i < argc && strcmp(argv[i], "--") != 0; i++)
		if (strcmp(argv[i], "--help") == 0 ||
		    strcmp(argv[i], "-h") == 0)
			return true;
	return false;
}

int
main(int argc, char **argv)
{
	struct cli c = { .timeout_s = DEFAULT_TIMEOUT_S };
	const struct command *cmd;
	const char *env;
	char *url = NULL;
	size_t len;
	int words, r;

	argc--;
	argv++;
	if ((r = globals(&c, &argc, argv)) != 0)
		return r;
	if (argc == 0) {
		usage(stderr);
		return RC_USAGE;
	}
	if (strcmp(argv[0], "help") == 0 || strcmp(argv[0], "--help") == 0 ||
	    strcmp(argv[0], "-h") == 0) {
		usage(stdout);
		return RC_OK;
	}
	if ((cmd = find(argc, argv, &words)) == NULL)
		return RC_USAGE;
	if (wants_help(argc - words, argv + words)) {
		printf("usage:\n");
		usage_line(cmd, stdout);
		return RC_OK;
	}
	if (c.url == NULL)
		c.url = (env = getenv("WEFT_URL")) != NULL && env[0] != '\0' ?
		    env : DEFAULT_URL;
	if (c.token == NULL && (env = getenv("WEFT_TOKEN")) != NULL &&
	    env[0] != '\0') {
		if ((r = token_ok("WEFT_TOKEN", env)) != 0)
			return r;
		c.token = env;
	}
	url = xstrdup(c.url);
	for (len = strlen(url); len > 0 && url[len - 1] == '/'; len--)
		url[len - 1] = '\0';
	/* The offline solve needs no daemon, so no address either. */
	if (cmd->fn != cmd_solve && strncmp(url, "http://", 7) != 0 &&
	    strncmp(url, "https://", 8) != 0) {
		free(url);
		return msg_usage("the daemon's URL must start with http:// or "
		    "https://, not \"%s\"", c.url);
	}
	c.url = url;
	c.tty = isatty(STDOUT_FILENO) == 1;
	if (curl_global_init(CURL_GLOBAL_DEFAULT) != 0) {
		free(url);
		msg("cannot start libcurl");
		return RC_FAILED;
	}
	r = cmd->fn(&c, argc - words, argv + words);
	fetch_done();
	curl_global_cleanup();
	free(url);
	fflush(stdout);
	if (ferror(stdout)) {
		msg("cannot write to standard output");
		if (r == RC_OK)
			r = RC_FAILED;
	}
	return r;
}
