/* SPDX-License-Identifier: GPL-3.0-or-later */
/* libFuzzer target: the config file reader (daemon/config.c). */

/*
 * DESIGN
 * The input is the text of a file given with weftd -f, read by
 * config_read_text() (config_read_file() reads the file into a buffer
 * and calls it).  Besides the sanitizers: whatever the text sets, the
 * defaults then fill the rest and config_dump() prints every option, and
 * config_clear() leaves nothing behind (LeakSanitizer).
 */

#include <stdint.h>
#include <stdio.h>

#include "../../daemon/base/err.h"
#include "../../daemon/config.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int
LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	struct config c;
	struct err e = { 0 };
	FILE *f;

	config_init(&c);
	(void)config_read_text(&c, (const char *)data, size, "fuzz.conf", &e);
	config_defaults(&c);
	if ((f = fopen("/dev/null", "w")) != NULL) {
		config_dump(&c, f);
		fclose(f);
	}
	config_clear(&c);
	return 0;
}
