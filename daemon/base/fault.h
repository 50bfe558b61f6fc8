/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Fault injection for test builds: named points that fail on request. */
#ifndef WEFT_BASE_FAULT_H
#define WEFT_BASE_FAULT_H

/*
 * DESIGN
 * Only a build made with `make FAULTS=1` (which defines WEFT_FAULTS and
 * compiles fault.c) has injection points; in every other build the points
 * sit inside #ifdef WEFT_FAULTS and are compiled out whole, and this
 * header declares nothing.  A point is a name the calling code asks about
 * ("db_commit", "lp_solve"); it fires while it is switched on by
 *
 *   - the environment variable WEFT_FAULT, read at every check (so fixed
 *     for the life of the process), or
 *   - the file named by WEFT_FAULT_FILE, read again at every check, so a
 *     test switches faults on and off while the daemon runs by rewriting
 *     the file (a missing or empty file switches everything off).
 *
 * Both hold specs separated by white space or commas: "point" or
 * "point:arg", where arg says how the point fails (an SQLite result such
 * as FULL, a solver outcome such as timeout); the calling code interprets
 * it.  The points and their arguments are listed in DEVELOPERS.md.  Every
 * hit is logged at warn level, so a test can see the fault in the log.
 * Any thread may call fault_hit().
 */

#ifdef WEFT_FAULTS

#include <stdbool.h>
#include <stddef.h>

/*
 * True when point is switched on; then arg (arglen bytes, may be 0)
 * holds the spec's argument ("" when it has none), truncated to fit.
 */
bool fault_hit(const char *point, char *arg, size_t arglen);

#endif /* WEFT_FAULTS */

#endif /* WEFT_BASE_FAULT_H */
