/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests for SHA-256 (daemon/base/sha256.c) and its equality check. */

/*
 * References:
 *  - the SHA-256 examples of NIST's "Cryptographic Standards and
 *    Guidelines: Examples with Intermediate Values" for FIPS 180-4
 *    (SHA256.pdf: "abc", the two-block 448-bit message) and FIPS 180-2,
 *    appendix B.3 (one million "a");
 *  - NIST SHAVS (SHA256ShortMsg.rsp, Len = 0) for the empty message;
 *  - the 896-bit message of the FIPS 180-2 SHA-384/512 examples, with
 *    the SHA-256 digest that Python's hashlib (OpenSSL) gives for it;
 *  - coreutils' sha256sum (/usr/bin/sha256sum, an independent
 *    implementation) on messages of every length around the block and
 *    padding boundaries.
 */

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "../../tap.h"
#include "../../../daemon/base/sha256.h"

static void
to_hex(const uint8_t *d, char out[2 * SHA256_LEN + 1])
{
	int i;

	for (i = 0; i < SHA256_LEN; i++)
		snprintf(out + 2 * i, 3, "%02x", d[i]);
}

static void
digest_hex(const void *p, size_t n, char out[2 * SHA256_LEN + 1])
{
	uint8_t d[SHA256_LEN];

	sha256(p, n, d);
	to_hex(d, out);
}

/* sha256sum's digest of the n bytes at p, or "" when it cannot run. */
static void
coreutils_hex(const void *p, size_t n, char out[2 * SHA256_LEN + 1])
{
	char path[] = "/tmp/weft-sha256-XXXXXX", cmd[128];
	FILE *f;
	int fd;

	out[0] = '\0';
	if ((fd = mkstemp(path)) < 0)
		return;
	if (write(fd, p, n) != (ssize_t)n) {
		close(fd);
		unlink(path);
		return;
	}
	close(fd);
	snprintf(cmd, sizeof(cmd), "/usr/bin/sha256sum '%s'", path);
	if ((f = popen(cmd, "r")) != NULL) {
		if (fscanf(f, "%64s", out) != 1)
			out[0] = '\0';
		pclose(f);
	}
	unlink(path);
}

int
main(void)
{
	char got[2 * SHA256_LEN + 1], want[2 * SHA256_LEN + 1];
	uint8_t a[SHA256_LEN], b[SHA256_LEN];
	unsigned char msg[300];
	struct sha256 c;
	char *million;
	size_t i, split;
	bool all;

	TEST_START("FIPS 180-4 example: \"abc\"");
	digest_hex("abc", 3, got);
	ASSERT_STR_EQ(got, "ba7816bf8f01cfea414140de5dae2223"
	    "b00361a396177a9cb410ff61f20015ad");
	TEST_DONE();

	TEST_START("FIPS 180-4 example: the two-block 448-bit message");
	digest_hex("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq",
	    56, got);
	ASSERT_STR_EQ(got, "248d6a61d20638b8e5c026930c3e6039"
	    "a33ce45964ff2167f6ecedd419db06c1");
	TEST_DONE();

	TEST_START("FIPS 180-2 B.3: one million \"a\", fed in odd pieces");
	million = malloc(1000000);
	ASSERT_TRUE(million != NULL);
	if (million != NULL) {
		memset(million, 'a', 1000000);
		sha256_init(&c);
		for (i = 0; i < 1000000; i += split) {
			split = 1000000 - i < 997 ? 1000000 - i : 997;
			sha256_update(&c, million + i, split);
		}
		sha256_final(&c, a);
		to_hex(a, got);
		ASSERT_STR_EQ(got, "cdc76e5c9914fb9281a1c7e284d73e67"
		    "f1809a48a497200e046d39ccc7112cd0");
		free(million);
	}
	TEST_DONE();

	TEST_START("SHAVS: the empty message");
	digest_hex(NULL, 0, got);
	ASSERT_STR_EQ(got, "e3b0c44298fc1c149afbf4c8996fb924"
	    "27ae41e4649b934ca495991b7852b855");
	TEST_DONE();

	TEST_START("NIST vector: the 896-bit message");
	digest_hex("abcdefghbcdefghicdefghijdefghijkefghijklfghijklmghijklmn"
	    "hijklmnoijklmnopjklmnopqklmnopqrlmnopqrsmnopqrstnopqrstu", 112,
	    got);
	ASSERT_STR_EQ(got, "cf5b16a778af8380036ce59e7b049237"
	    "0b249b11e8f07a51afac45037afee9d1");
	TEST_DONE();

	TEST_START("every length 0..130 agrees with coreutils' sha256sum");
	for (i = 0; i < sizeof(msg); i++)
		msg[i] = (unsigned char)(i * 131 + 7);
	all = true;
	for (i = 0; i <= 130 && all; i++) {
		digest_hex(msg, i, got);
		coreutils_hex(msg, i, want);
		if (strcmp(got, want) != 0) {
			all = false;
			ASSERT_STR_EQ(got, want);
		}
	}
	ASSERT_TRUE(all);
	TEST_DONE();

	TEST_START("pieces split anywhere give the one-call digest");
	sha256(msg, sizeof(msg), a);
	all = true;
	for (split = 0; split <= sizeof(msg); split++) {
		sha256_init(&c);
		sha256_update(&c, msg, split);
		sha256_update(&c, NULL, 0);
		sha256_update(&c, msg + split, sizeof(msg) - split);
		sha256_final(&c, b);
		if (memcmp(a, b, sizeof(a)) != 0)
			all = false;
	}
	ASSERT_TRUE(all);
	TEST_DONE();

	TEST_START("a context is ready again after final");
	sha256_init(&c);
	sha256_update(&c, "xyz", 3);
	sha256_final(&c, a);
	sha256_update(&c, "abc", 3);
	sha256_final(&c, a);
	to_hex(a, got);
	ASSERT_STR_EQ(got, "ba7816bf8f01cfea414140de5dae2223"
	    "b00361a396177a9cb410ff61f20015ad");
	TEST_DONE();

	TEST_START("equal compares every byte");
	memset(a, 0x5a, sizeof(a));
	memcpy(b, a, sizeof(b));
	ASSERT_TRUE(sha256_equal(a, b, sizeof(a)));
	ASSERT_TRUE(sha256_equal(a, b, 0));
	for (i = 0; i < sizeof(a); i++) {
		b[i] ^= 0x01;
		ASSERT_TRUE(!sha256_equal(a, b, sizeof(a)));
		b[i] ^= 0x81;
		ASSERT_TRUE(!sha256_equal(a, b, sizeof(a)));
		b[i] ^= 0x80;
	}
	ASSERT_TRUE(sha256_equal(a, b, sizeof(a)));
	TEST_DONE();

	return tap_finish();
}
