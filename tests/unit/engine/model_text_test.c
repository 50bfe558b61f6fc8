/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit tests of model_text_problem(): what importers let into ids, names. */

/*
 * The reference is RFC 3629 (UTF-8): the valid strings are its section 7
 * examples, byte for byte; the invalid ones are the forms its sections 3,
 * 4 and 10 rule out (overlong forms such as C0 AF for '/', the surrogates
 * U+D800..U+DFFF, anything past U+10FFFF, the bytes C0, C1, F5..FF, a
 * sequence cut short, a lone continuation byte).  jansson refuses the
 * same strings, which is why an importer must: the fuzz targets found CSV
 * and SNDlib ids and names that GET /v1/topology could not encode
 * (tests/fuzz/regress/).
 */

#include <stdbool.h>
#include <string.h>

#include "../../tap.h"
#include "../../../daemon/engine/model.h"

struct sample {
	const char *name;
	const char *s;
	size_t n;
};

#define S(name, lit)	{ name, lit, sizeof(lit) - 1 }

int
main(void)
{
	static const struct sample valid[] = {
		S("ASCII", "L_AB-1.2"),
		S("RFC 3629 example A<NOT IDENTICAL TO><ALPHA>.",
		    "\x41\xe2\x89\xa2\xce\x91\x2e"),
		S("RFC 3629 example, Korean", "\xed\x95\x9c\xea\xb5\xad\xec"
		    "\x96\xb4"),
		S("RFC 3629 example, Japanese", "\xe6\x97\xa5\xe6\x9c\xac\xe8"
		    "\xaa\x9e"),
		S("RFC 3629 example, BOM and U+233B4", "\xef\xbb\xbf\xf0\xa3"
		    "\x8e\xb4"),
		S("U+10FFFF, the last code point", "\xf4\x8f\xbf\xbf"),
		S("U+D7FF and U+E000 around the surrogates", "\xed\x9f\xbf"
		    "\xee\x80\x80"),
	};
	static const struct sample invalid[] = {
		S("overlong '/' (C0 AF)", "a\xc0\xaf" "b"),
		S("overlong three-byte form (E0 80 AF)", "\xe0\x80\xaf"),
		S("overlong four-byte form (F0 80 80 AF)", "\xf0\x80\x80\xaf"),
		S("surrogate U+D800", "\xed\xa0\x80"),
		S("surrogate U+DFFF", "\xed\xbf\xbf"),
		S("past U+10FFFF (F4 90 80 80)", "\xf4\x90\x80\x80"),
		S("byte F5", "\xf5\x80\x80\x80"),
		S("byte FF", "x\xff"),
		S("Latin-1 u umlaut", "Z\xfcrich"),
		S("cut short at the end", "\xe2\x89"),
		S("cut short before ASCII", "\xe2\x89" "a"),
		S("lone continuation byte", "\x80"),
	};
	size_t i;

	TEST_START("accepts the UTF-8 of RFC 3629");
	for (i = 0; i < sizeof(valid) / sizeof(valid[0]); i++) {
		if (model_text_problem(valid[i].s, valid[i].n, true) != NULL)
			TAP_FAIL("refused: %s", valid[i].name);
	}
	TEST_DONE();

	TEST_START("refuses what RFC 3629 rules out, id or name");
	for (i = 0; i < sizeof(invalid) / sizeof(invalid[0]); i++) {
		if (model_text_problem(invalid[i].s, invalid[i].n,
		    false) == NULL)
			TAP_FAIL("accepted: %s", invalid[i].name);
	}
	TEST_DONE();

	TEST_START("refuses '/' in an id, keeps it in a name");
	ASSERT_TRUE(model_text_problem("A/B", 3, true) != NULL);
	ASSERT_TRUE(model_text_problem("A/B", 3, false) == NULL);
	TEST_DONE();

	TEST_START("reads only the n bytes given");
	/* The byte after n would make the sequence whole: not looked at. */
	ASSERT_TRUE(model_text_problem("\xc3\xbc", 1, false) != NULL);
	ASSERT_TRUE(model_text_problem("ab/", 2, true) == NULL);
	TEST_DONE();

	return tap_finish();
}
