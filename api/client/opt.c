/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A command's own options: long names, values, positional arguments. */
#include <assert.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "opt.h"
#include "client.h"

static const char *const objectives[] = { "cost", "balance", "congestion" };
static const char *const formulations[] = { "path", "arc", "potential" };

/* The request members opt_member() knows. */
static const struct member {
	const char *opt;		/* option name, without "--" */
	const char *key;		/* the member's name */
	const char *const *words;	/* its words; NULL: a number */
	int n_words;
	double lo, hi;			/* the number's range */
} members[] = {
	{ "objective", "objective", objectives, 3, 0, 0 },
	{ "headroom", "headroom", NULL, 0, 1e-9, 1 },
	{ "formulation", "formulation", formulations, 3, 0, 0 },
	{ "gap-target", "gap_target", NULL, 0, 0, 0.5 },
	{ "scale", "scale", NULL, 0, 0, 1e6 },
	{ "time-limit", "time_limit_s", NULL, 0, 1e-3, 86400 },
};

void
opt_init(struct opts *o, int argc, char **argv)
{
	o->argc = argc;
	o->argv = argv;
	o->i = 0;
	o->only_args = false;
}

int
opt_next(struct opts *o, const struct opt_def *defs, const char **valp)
{
	const char *a, *eq;
	size_t len;
	int k;

	*valp = NULL;
	if (o->i >= o->argc)
		return OPT_END;
	a = o->argv[o->i++];
	if (!o->only_args && strcmp(a, "--") == 0) {
		o->only_args = true;
		return opt_next(o, defs, valp);
	}
	/* "-" alone is an argument (standard input, by convention). */
	if (o->only_args || a[0] != '-' || a[1] == '\0') {
		*valp = a;
		return OPT_ARG;
	}
	if (a[1] != '-') {
		msg("unknown option %s (options are spelt --name)", a);
		return OPT_BAD;
	}
	a += 2;
	eq = strchr(a, '=');
	len = eq != NULL ? (size_t)(eq - a) : strlen(a);
	for (k = 0; defs[k].name != NULL; k++)
		if (strlen(defs[k].name) == len &&
		    strncmp(defs[k].name, a, len) == 0)
			break;
	if (defs[k].name == NULL) {
		msg("unknown option --%.*s", (int)len, a);
		return OPT_BAD;
	}
	if (!defs[k].has_value) {
		if (eq != NULL) {
			msg("option --%s takes no value", defs[k].name);
			return OPT_BAD;
		}
		return k;
	}
	if (eq != NULL)
		*valp = eq + 1;
	else if (o->i < o->argc)
		*valp = o->argv[o->i++];
	else {
		msg("option --%s needs a value", defs[k].name);
		return OPT_BAD;
	}
	return k;
}

int
opt_num(const char *name, const char *val, double lo, double hi, double *xp)
{
	char *end;
	double x;

	errno = 0;
	x = strtod(val, &end);
	if (errno != 0 || end == val || *end != '\0' || !isfinite(x) ||
	    x < lo || x > hi)
		return msg_usage("%s: want a number in [%g, %g], not \"%s\"",
		    name, lo, hi, val);
	*xp = x;
	return 0;
}

int
opt_long(const char *name, const char *val, long lo, long hi, long *np)
{
	char *end;
	long n;

	errno = 0;
	n = strtol(val, &end, 10);
	if (errno != 0 || end == val || *end != '\0' || n < lo || n > hi)
		return msg_usage("%s: want a whole number in %ld..%ld, not "
		    "\"%s\"", name, lo, hi, val);
	*np = n;
	return 0;
}

int
opt_word(const char *name, const char *val, const char *const *words,
    int n, int *ip)
{
	int k;

	for (k = 0; k < n; k++)
		if (strcmp(val, words[k]) == 0) {
			*ip = k;
			return 0;
		}
	msg("%s: \"%s\" is not one of:", name, val);
	for (k = 0; k < n; k++)
		fprintf(stderr, "%s%s", k == 0 ? "      " : ", ", words[k]);
	fputc('\n', stderr);
	return RC_USAGE;
}

int
opt_member(const char *name, const char *val, json_t *obj)
{
	const struct member *m = NULL;
	char opt[32];
	double x;
	size_t i;
	int k, r;

	for (i = 0; i < sizeof(members) / sizeof(members[0]); i++)
		if (strcmp(members[i].opt, name) == 0)
			m = &members[i];
	assert(m != NULL);
	snprintf(opt, sizeof(opt), "--%s", m->opt);
	if (m->words != NULL) {
		if ((r = opt_word(opt, val, m->words, m->n_words, &k)) == 0)
			json_object_set_new(obj, m->key,
			    json_string(m->words[k]));
	} else if ((r = opt_num(opt, val, m->lo, m->hi, &x)) == 0)
		json_object_set_new(obj, m->key, json_real(x));
	return r;
}
