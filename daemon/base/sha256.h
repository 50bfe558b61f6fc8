/* SPDX-License-Identifier: GPL-3.0-or-later */
/* SHA-256 (FIPS 180-4) and a constant-time comparison of byte strings. */
#ifndef WEFT_BASE_SHA256_H
#define WEFT_BASE_SHA256_H

/*
 * DESIGN
 * The hash of the API tokens (api/auth.c) is SHA-256 of a per-token salt
 * followed by the token.  This is a plain implementation of FIPS 180-4,
 * section 6.2, for byte-oriented messages: no tables besides the round
 * constants, no dependence on the host's byte order.  Any thread; the
 * context is the caller's.
 */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#define SHA256_LEN	32	/* digest bytes */
#define SHA256_BLOCK	64	/* message block bytes */

struct sha256 {
	uint32_t h[8];			/* the intermediate hash value */
	uint64_t len;			/* message bytes so far */
	uint8_t buf[SHA256_BLOCK];	/* the unfinished block */
	size_t n;			/* bytes in buf, < SHA256_BLOCK */
};

/* Starts a hash (the initial hash value of FIPS 180-4, 5.3.3). */
void sha256_init(struct sha256 *c);

/* Adds n bytes at p (p may be NULL when n is 0). */
void sha256_update(struct sha256 *c, const void *p, size_t n);

/* Pads, writes the digest to out and leaves c to be started again. */
void sha256_final(struct sha256 *c, uint8_t out[SHA256_LEN]);

/* The digest of n bytes at p, in one call. */
void sha256(const void *p, size_t n, uint8_t out[SHA256_LEN]);

/*
 * True when the n bytes at a and b are equal.  The time taken depends on
 * n only, never on where the strings differ (for secrets).
 */
bool sha256_equal(const void *a, const void *b, size_t n);

#endif /* WEFT_BASE_SHA256_H */
