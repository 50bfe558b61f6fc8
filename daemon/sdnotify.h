/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Telling the service manager about readiness, stopping and liveness. */
#ifndef WEFT_DAEMON_SDNOTIFY_H
#define WEFT_DAEMON_SDNOTIFY_H

/*
 * DESIGN
 * The messages go through libsystemd's sd_notify() to the socket named by
 * NOTIFY_SOCKET; without it (not started by systemd with Type=notify)
 * every call here does nothing.  Readiness is sent once the database is
 * open and HTTP listens, STOPPING=1 when a stop signal arrives.
 *
 * The watchdog: when the manager asks for one (WATCHDOG_USEC, read by
 * sd_watchdog_enabled()), a thread wakes every half interval, checks that
 * the daemon still answers, and only then sends WATCHDOG=1.  The checks:
 * the service's locks and its database connection answer a status read
 * (service_status()); the solver thread has not been inside one solve for
 * longer than twice the solve time limit plus a minute (no bound without
 * a limit); and an HTTP request to the daemon's own listen address gets a
 * status line, or at least an orderly close when the connection limits
 * are reached, within a third of the interval.  With HTTPS there is no
 * HTTP probe: it speaks plain HTTP, and every probe would leave a TLS
 * error in the log.  A check that hangs sends
 * nothing either, so a deadlock ends in a restart by the manager.  The
 * thread also keeps STATUS= up to date with the plan revision.
 */

#include <stdbool.h>

struct err;
struct service;
struct watchdog;

/* READY=1 with a STATUS= line naming the listen address and database. */
void sdnotify_ready(const char *listen, const char *db);

/* STOPPING=1: the daemon is shutting down. */
void sdnotify_stopping(void);

/*
 * Starts the watchdog thread when the manager enabled one; *wp is NULL
 * when it did not.  listen is the daemon's listen address ("host:port",
 * "[v6]:port"; a wildcard address is probed on loopback), tls whether it
 * serves HTTPS (then it is not probed), solve_limit_s the solve time
 * limit (0: none).  svc is borrowed until watchdog_stop().
 * Returns 0, or ERR_INVALID (listen cannot be resolved) / ERR_INTERNAL.
 * Call it with the stop signals blocked: the thread inherits the mask.
 */
int watchdog_start(struct service *svc, const char *listen, bool tls,
    double solve_limit_s, struct watchdog **wp, struct err *e);

/* Stops and joins the thread (within one probe timeout), frees w (NULL
   ok).  Call it before HTTP stops. */
void watchdog_stop(struct watchdog *w);

#endif /* WEFT_DAEMON_SDNOTIFY_H */
