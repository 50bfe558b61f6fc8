/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A command's own options: long names, values, positional arguments. */
#ifndef WEFT_CLIENT_OPT_H
#define WEFT_CLIENT_OPT_H

/*
 * Options are "--name value" or "--name=value" (or "--name" alone for a
 * flag) and may come before, between or after the positional arguments;
 * "--" ends the options.  Each command lists its options in a table
 * ended by { NULL }.  Messages for a bad command line go to stderr.
 */

#include <stdbool.h>

#include <jansson.h>

struct opt_def {
	const char *name;	/* without the leading "--" */
	bool has_value;
};

struct opts {
	int argc;
	char **argv;		/* borrowed */
	int i;			/* next argument to look at */
	bool only_args;		/* "--" seen */
};

enum {
	OPT_END = -1,		/* no arguments left */
	OPT_ARG = -2,		/* a positional argument, in *valp */
	OPT_BAD = -3,		/* unknown option or missing value; said */
};

/* Starts reading argv[0 .. argc-1]. */
void opt_init(struct opts *o, int argc, char **argv);

/*
 * Returns the index in defs of the next option, with its value in *valp
 * (NULL for a flag); OPT_ARG for a positional argument; OPT_END at the
 * end; OPT_BAD after telling the user what was wrong.
 */
int opt_next(struct opts *o, const struct opt_def *defs, const char **valp);

/*
 * Reads val as a finite number in [lo, hi] into *xp; returns 0, or
 * RC_USAGE after telling the user, naming the option or argument as name
 * ("--top", "sweep id").
 */
int opt_num(const char *name, const char *val, double lo, double hi,
    double *xp);

/* As opt_num() for a whole number in [lo, hi]. */
int opt_long(const char *name, const char *val, long lo, long hi,
    long *np);

/*
 * Reads val as one of the n words in words[]; returns 0 with its index in
 * *ip, or RC_USAGE after listing the words.
 */
int opt_word(const char *name, const char *val, const char *const *words,
    int n, int *ip);

/*
 * The options that several commands send as members of a JSON request,
 * each checked as the daemon documents it (docs/api.md): name (without
 * "--") is "objective" or "formulation" (a word of the policy's), or
 * "headroom", "scale" or "time-limit" (a number; member "time_limit_s").
 * Sets that member of obj from val and returns 0, or returns RC_USAGE
 * after telling the user.
 */
int opt_member(const char *name, const char *val, json_t *obj);

#endif /* WEFT_CLIENT_OPT_H */
