/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Splitting a listen address, "host:port" or "[v6]:port". */
#include <string.h>

#include "hostport.h"

int
hostport_split(const char *listen, char *host, size_t hostn,
    const char **portp)
{
	const char *colon, *port;
	size_t n;

	if (listen == NULL)
		return -1;
	if (listen[0] == '[') {
		colon = strchr(listen, ']');
		if (colon == NULL || colon[1] != ':')
			return -1;
		n = (size_t)(colon - listen - 1);
		port = colon + 2;
		listen++;
	} else {
		if ((colon = strrchr(listen, ':')) == NULL)
			return -1;
		n = (size_t)(colon - listen);
		if (memchr(listen, ':', n) != NULL)
			return -1;
		port = colon + 1;
	}
	if (n == 0 || n >= hostn || port[0] == '\0')
		return -1;
	memcpy(host, listen, n);
	host[n] = '\0';
	*portp = port;
	return 0;
}
