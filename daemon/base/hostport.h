/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Splitting a listen address, "host:port" or "[v6]:port". */
#ifndef WEFT_BASE_HOSTPORT_H
#define WEFT_BASE_HOSTPORT_H

/*
 * DESIGN
 * One reader of the `listen` form for the HTTP server (api/http.c, which
 * binds it) and the watchdog probe (daemon/sdnotify.c, which connects to
 * it).  An IPv6 address goes in brackets so its colons are not read as
 * the port's (the form of RFC 3986, section 3.2.2).  Nothing is resolved
 * here.
 */

#include <stddef.h>

/*
 * Splits listen into host (NUL-terminated, in a buffer of hostn bytes)
 * and *portp (a pointer into listen).  Returns 0, or -1 when listen is
 * NULL or is neither form: a host or port that is empty, a host that does
 * not fit, a colon in a host without brackets.
 */
int hostport_split(const char *listen, char *host, size_t hostn,
    const char **portp);

#endif /* WEFT_BASE_HOSTPORT_H */
