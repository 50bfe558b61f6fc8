/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reading a whole local file (a network, a matrix) into memory. */
#ifndef WEFT_CLIENT_FILE_H
#define WEFT_CLIENT_FILE_H

#include <stddef.h>

#define FILE_MAX	(1UL << 30)	/* largest file read, bytes */

/*
 * Reads path ("-": standard input) into a new NUL-terminated buffer
 * *bufp of *lenp bytes (the caller frees it).  Returns 0, or RC_USAGE
 * after telling the user why not (missing, unreadable, over FILE_MAX).
 */
int file_read(const char *path, char **bufp, size_t *lenp);

/*
 * The format a file name suggests: "csv" for a name ending in ".csv"
 * (any case), else "sndlib".
 */
const char *file_format(const char *path);

#endif /* WEFT_CLIENT_FILE_H */
