/* SPDX-License-Identifier: GPL-3.0-or-later */
/* What the sweep commands share: watching one, summing one up. */
#ifndef WEFT_CLIENT_SWEEP_H
#define WEFT_CLIENT_SWEEP_H

#include <stdio.h>

#include <jansson.h>

struct cli;
struct opt_def;

#define SWEEP_INTERVAL_S	1.0	/* default time between polls */

/*
 * Polls GET /v1/sweeps/ID every interval_s until the sweep is no longer
 * running, showing its progress: a bar with the estimated time left
 * (the daemon's eta_s) redrawn in place when stdout is a terminal, else
 * one line each time the count of finished scenarios changes.  With
 * c->json nothing is shown until the end, which prints the sweep's
 * document as the daemon sent it.  Then returns sweep_rc() of the last
 * document, or the exit code of a failed request.
 */
int sweep_watch(const struct cli *c, long long id, double interval_s);

/*
 * The exit code a sweep document gives: RC_OK while running or once
 * done, RC_PARTIAL when done or cancelled with scenarios that leave
 * traffic unserved (report.unserved not empty), RC_FAILED when it
 * ended otherwise (cancelled, interrupted or failed).
 */
int sweep_rc(const json_t *sw);

/* Two lines: state and counts, the worst scenario, unserved ones. */
void sweep_summary(const json_t *sw, FILE *f);

/* Reads the value val of option k of a sweep command; 0 or RC_USAGE. */
typedef int sweep_opt_fn(int k, const char *val, void *arg);

/*
 * Reads the command line of "sweep <what> ID": the one sweep id into
 * *idp and, when defs is not NULL, the options of defs, each handed to
 * fn(k, value, arg) as it comes.  Returns 0, or RC_USAGE after telling
 * the user.
 */
int sweep_id(const char *what, int argc, char **argv,
    const struct opt_def *defs, sweep_opt_fn *fn, void *arg, long long *idp);

#endif /* WEFT_CLIENT_SWEEP_H */
