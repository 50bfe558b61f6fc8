/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Readiness, stopping and the watchdog, through the manager's socket. */

/*
 * DESIGN
 * See sdnotify.h.  The watchdog thread is the only one here; it holds no
 * lock while it checks, so watchdog_stop() waits at most for one check,
 * whose HTTP probe is bounded by probe_ms (the status read is bounded by
 * the database's busy timeout, unless the service is deadlocked, which is
 * what the watchdog is for).  A failed check is logged once, when the
 * checks start failing, and once when they pass again.
 */

#include <sys/socket.h>
#include <sys/types.h>

#include <errno.h>
#include <netdb.h>
#include <poll.h>
#include <pthread.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <systemd/sd-daemon.h>

#include "sdnotify.h"
#include "service.h"
#include "solver_thread.h"
#include "base/clock.h"
#include "base/err.h"
#include "base/hostport.h"
#include "base/log.h"
#include "base/xalloc.h"

#define WATCHDOG_PROBE_MIN_MS	200	/* shortest HTTP probe timeout */
#define WATCHDOG_PROBE_MAX_MS	10000	/* longest HTTP probe timeout */
#define WATCHDOG_SOLVE_SLACK_S	60	/* a solve may overrun its limit by
					   twice the limit plus this */
#define WATCHDOG_WHY_MAX	192	/* a failed check's reason, bytes */

struct watchdog {
	pthread_t thread;
	pthread_mutex_t mu;
	pthread_cond_t cv;		/* monotonic (clock_cond_init) */
	bool stopping;			/* under mu */
	struct service *svc;		/* borrowed */
	double solve_limit_s;		/* 0: solves have no bound */
	double interval_ms;		/* half the manager's interval */
	bool probe;			/* probe HTTP (not with HTTPS) */
	int probe_ms;			/* HTTP probe timeout */
	struct sockaddr_storage addr;	/* where the HTTP probe connects */
	socklen_t addrlen;
	char listen[128];		/* for STATUS= */
	char status[256];		/* the last STATUS= sent; thread's */
	bool failing;			/* the last check failed; thread's */
};

void
sdnotify_ready(const char *listen, const char *db)
{
	(void)sd_notifyf(0, "READY=1\nSTATUS=serving %s, database %s",
	    listen, db);
}

void
sdnotify_stopping(void)
{
	(void)sd_notify(0, "STOPPING=1\nSTATUS=stopping");
}

/* ---- the HTTP probe ---- */

/*
 * The address to probe for listen ("host:port" or "[v6]:port"): a
 * wildcard address is reached on loopback.  http_start() has accepted
 * listen already, so a failure here is unexpected.
 */
static int
probe_addr(struct watchdog *w, const char *listen, struct err *e)
{
	struct addrinfo hints, *ai = NULL;
	char host[256];
	const char *port;
	int gr;

	if (hostport_split(listen, host, sizeof(host), &port) != 0)
		goto bad;
	if (strcmp(host, "0.0.0.0") == 0 || strcmp(host, "*") == 0)
		snprintf(host, sizeof(host), "127.0.0.1");
	else if (strcmp(host, "::") == 0)
		snprintf(host, sizeof(host), "::1");
	memset(&hints, 0, sizeof(hints));
	hints.ai_socktype = SOCK_STREAM;
	hints.ai_flags = AI_NUMERICSERV;
	if ((gr = getaddrinfo(host, port, &hints, &ai)) != 0)
		return err_set(e, ERR_INVALID, "listen", "cannot resolve "
		    "\"%s\" for the watchdog: %s", listen, gai_strerror(gr));
	if (ai->ai_addrlen > sizeof(w->addr)) {
		freeaddrinfo(ai);
		goto bad;
	}
	memcpy(&w->addr, ai->ai_addr, ai->ai_addrlen);
	w->addrlen = ai->ai_addrlen;
	freeaddrinfo(ai);
	return 0;
bad:
	return err_set(e, ERR_INVALID, "listen", "\"%s\" is not host:port "
	    "or [address]:port", listen);
}

/* Polls pfd until end_ms (clock_ms()); > 0 ready, 0 timed out, < 0 error. */
static int
wait_fd(struct pollfd *pfd, double end_ms)
{
	double left;
	int r;

	for (;;) {
		if ((left = end_ms - clock_ms()) <= 0)
			return 0;
		pfd->revents = 0;
		r = poll(pfd, 1, (int)left + 1);
		if (r >= 0 || errno != EINTR)
			return r;
	}
}

/*
 * Sends GET /v1/health to the daemon's own address.  True when a reply
 * begins within probe_ms, or the server closes or resets the connection
 * (it does at its connection limits: it is alive then too); false with
 * the reason in why when it cannot connect or nothing comes in time.
 */
static bool
probe_http(const struct watchdog *w, char *why, size_t whylen)
{
	static const char req[] = "GET /v1/health HTTP/1.1\r\n"
	    "Host: weftd\r\nUser-Agent: weftd-watchdog\r\n"
	    "Connection: close\r\n\r\n";
	struct pollfd pfd;
	double end = clock_ms() + w->probe_ms;
	char buf[64];
	size_t sent = 0;
	socklen_t len;
	ssize_t n;
	bool ok = false;
	int fd, soerr = 0, r;

	fd = socket(w->addr.ss_family, SOCK_STREAM | SOCK_NONBLOCK |
	    SOCK_CLOEXEC, 0);
	if (fd < 0) {
		snprintf(why, whylen, "socket: %s", strerror(errno));
		return false;
	}
	pfd.fd = fd;
	if (connect(fd, (const struct sockaddr *)&w->addr, w->addrlen) != 0) {
		if (errno != EINPROGRESS) {
			snprintf(why, whylen, "HTTP probe cannot connect: %s",
			    strerror(errno));
			goto out;
		}
		pfd.events = POLLOUT;
		if ((r = wait_fd(&pfd, end)) <= 0) {
			snprintf(why, whylen, "HTTP probe: %s",
			    r == 0 ? "no connection in time" : strerror(errno));
			goto out;
		}
		len = sizeof(soerr);
		if (getsockopt(fd, SOL_SOCKET, SO_ERROR, &soerr, &len) != 0)
			soerr = errno;
		if (soerr != 0) {
			snprintf(why, whylen, "HTTP probe cannot connect: %s",
			    strerror(soerr));
			goto out;
		}
	}
	while (sent < sizeof(req) - 1) {
		n = send(fd, req + sent, sizeof(req) - 1 - sent, MSG_NOSIGNAL);
		if (n >= 0) {
			sent += (size_t)n;
			continue;
		}
		if (errno == EPIPE || errno == ECONNRESET) {
			ok = true;	/* closed by the server: it runs */
			goto out;
		}
		if (errno != EAGAIN && errno != EINTR) {
			snprintf(why, whylen, "HTTP probe: %s", strerror(errno));
			goto out;
		}
		pfd.events = POLLOUT;
		if (wait_fd(&pfd, end) <= 0) {
			snprintf(why, whylen, "HTTP probe: request not taken "
			    "in %d ms", w->probe_ms);
			goto out;
		}
	}
	pfd.events = POLLIN;
	for (;;) {
		if ((r = wait_fd(&pfd, end)) <= 0) {
			snprintf(why, whylen, "HTTP probe: %s", r == 0 ?
			    "no reply in time" : strerror(errno));
			goto out;
		}
		n = recv(fd, buf, sizeof(buf), 0);
		if (n >= 0 || errno == ECONNRESET) {
			ok = true;	/* a reply, or closed by the server */
			goto out;
		}
		if (errno != EAGAIN && errno != EINTR) {
			snprintf(why, whylen, "HTTP probe: %s", strerror(errno));
			goto out;
		}
	}
out:
	close(fd);
	return ok;
}

/* ---- the checks ---- */

/* Sends STATUS= when the plan's line changed since the last one. */
static void
update_status(struct watchdog *w, const struct service_status *st)
{
	char line[sizeof(w->status)];

	snprintf(line, sizeof(line), "serving %s, plan %lld for model "
	    "revision %lld (newest %lld)%s", w->listen,
	    (long long)st->plan_revision, (long long)st->plan_model_revision,
	    (long long)st->model_revision, st->last_solve_failed ?
	    ", the last solve failed" : "");
	if (strcmp(line, w->status) == 0)
		return;
	memcpy(w->status, line, sizeof(w->status));
	(void)sd_notifyf(0, "STATUS=%s", line);
}

/* Whether the daemon answers (see sdnotify.h); why says what did not. */
static bool
check(struct watchdog *w, char *why, size_t whylen)
{
	struct service_status st;
	struct err e = { 0 };
	double busy;

	/*
	 * A deadlock in the service hangs here, and no WATCHDOG=1 follows.
	 * An error is an answer: the database refusing a read is reported
	 * by GET /v1/health, and a restart would not cure it.
	 */
	if (service_status(w->svc, &st, &e) == 0)
		update_status(w, &st);
	else
		log_warn("watchdog status read failed msg=\"%s\"", e.msg);
	busy = solver_busy_s(service_solver(w->svc));
	if (w->solve_limit_s > 0 &&
	    busy > 2 * w->solve_limit_s + WATCHDOG_SOLVE_SLACK_S) {
		snprintf(why, whylen, "the solver has been in one solve for "
		    "%.0f s (time limit %.0f s)", busy, w->solve_limit_s);
		return false;
	}
	return !w->probe || probe_http(w, why, whylen);
}

static void *
run(void *arg)
{
	struct watchdog *w = arg;
	struct timespec ts;
	char why[WATCHDOG_WHY_MAX];
	double next = clock_ms();

	pthread_mutex_lock(&w->mu);
	while (!w->stopping) {
		pthread_mutex_unlock(&w->mu);
		why[0] = '\0';
		if (check(w, why, sizeof(why))) {
			(void)sd_notify(0, "WATCHDOG=1");
			if (w->failing)
				log_info("watchdog check passes again");
			w->failing = false;
		} else if (!w->failing) {
			log_err("watchdog check failed, no keep-alive sent "
			    "msg=\"%s\"", why);
			w->failing = true;
		}
		/* After a slow check, go on from now rather than catch up. */
		next += w->interval_ms;
		if (next < clock_ms())
			next = clock_ms();
		clock_timespec(&ts, next);
		pthread_mutex_lock(&w->mu);
		while (!w->stopping &&
		    pthread_cond_timedwait(&w->cv, &w->mu, &ts) != ETIMEDOUT)
			;
	}
	pthread_mutex_unlock(&w->mu);
	return NULL;
}

int
watchdog_start(struct service *svc, const char *listen, bool tls,
    double solve_limit_s, struct watchdog **wp, struct err *e)
{
	struct watchdog *w = NULL;
	uint64_t usec = 0;
	double probe;
	int r = ERR_INTERNAL;

	*wp = NULL;
	if ((r = sd_watchdog_enabled(0, &usec)) <= 0 || usec == 0) {
		if (r < 0)
			log_warn("watchdog settings not understood: %s",
			    strerror(-r));
		return 0;
	}
	w = xcalloc(1, sizeof(*w));
	w->svc = svc;
	w->solve_limit_s = solve_limit_s;
	w->probe = !tls;
	w->interval_ms = (double)usec / 2e3;
	probe = (double)usec / 3e3;
	w->probe_ms = probe < WATCHDOG_PROBE_MIN_MS ? WATCHDOG_PROBE_MIN_MS :
	    probe > WATCHDOG_PROBE_MAX_MS ? WATCHDOG_PROBE_MAX_MS : (int)probe;
	snprintf(w->listen, sizeof(w->listen), "%s", listen);
	if ((r = probe_addr(w, listen, e)) != 0) {
		free(w);
		return r;
	}
	pthread_mutex_init(&w->mu, NULL);
	clock_cond_init(&w->cv);
	if (pthread_create(&w->thread, NULL, run, w) != 0) {
		pthread_cond_destroy(&w->cv);
		pthread_mutex_destroy(&w->mu);
		free(w);
		return err_set(e, ERR_INTERNAL, NULL,
		    "cannot start the watchdog thread");
	}
	log_info("watchdog on interval_ms=%.0f http_probe=%s probe_ms=%d",
	    w->interval_ms, w->probe ? "yes" : "no", w->probe_ms);
	*wp = w;
	return 0;
}

void
watchdog_stop(struct watchdog *w)
{
	if (w == NULL)
		return;
	pthread_mutex_lock(&w->mu);
	w->stopping = true;
	pthread_cond_signal(&w->cv);
	pthread_mutex_unlock(&w->mu);
	pthread_join(w->thread, NULL);
	pthread_cond_destroy(&w->cv);
	pthread_mutex_destroy(&w->mu);
	free(w);
}
