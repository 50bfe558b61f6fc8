/* SPDX-License-Identifier: GPL-3.0-or-later */
/* One list of error codes for all of weft, and the error detail struct. */
#ifndef WEFT_BASE_ERR_H
#define WEFT_BASE_ERR_H

/*
 * Every function that can fail returns int: 0 on success, one of these
 * negative codes on failure.  Outcomes (an infeasible model, traffic left
 * unserved) are not errors.
 */
enum {
	ERR_INTERNAL = -1,	/* our own bug or an unexpected library state */
	ERR_NOMEM = -2,		/* allocation failed */
	ERR_INVALID = -3,	/* the input is malformed or inconsistent */
	ERR_NOTFOUND = -4,	/* the named thing does not exist */
	ERR_CONFLICT = -5,	/* the change clashes with stored state */
	ERR_TOOBIG = -6,	/* the input exceeds a configured limit */
	ERR_BUSY = -7,		/* try again later */
	ERR_IO = -8,		/* a file or socket operation failed */
	ERR_DB = -9,		/* SQLite failed */
	ERR_SOLVER = -10,	/* the LP solver failed to solve at all */
	ERR_TIMEOUT = -11,	/* a time limit passed with no usable result */
	ERR_MEDIATYPE = -12,	/* the request body has the wrong content type */
	ERR_METHOD = -13,	/* the route exists but not with this method */
	ERR_UNAUTHORIZED = -14,	/* no valid credentials with the request */
	ERR_FORBIDDEN = -15,	/* valid credentials, too weak a role */
};

#define ERR_WHERE_MAX	128
#define ERR_MSG_MAX	256

/*
 * Detail for a person: a code, where in the input the problem is (a JSON
 * path such as "demands[3].rate_bps", or "file:line") and a one-line message.
 * The first error set is kept; later err_set() calls only return their code.
 */
struct err {
	int code;			/* 0 while no error is set */
	char where[ERR_WHERE_MAX];	/* location in the input, "" if none */
	char msg[ERR_MSG_MAX];		/* one line, no trailing newline */
};

/* Returns the constant text for code ("invalid input", ...). */
const char *err_str(int code);

/* Returns a stable lower-case word for code, for clients to match on. */
const char *err_word(int code);

/*
 * Records code, where (may be NULL) and the formatted message in e unless
 * e is NULL or already holds an error.  Returns code, so callers can write
 * "return err_set(e, ERR_INVALID, ...)".
 */
int err_set(struct err *e, int code, const char *where, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

/* Empties e (may be NULL). */
void err_clear(struct err *e);

#endif /* WEFT_BASE_ERR_H */
