/* SPDX-License-Identifier: GPL-3.0-or-later */
/* weftd token add|list|revoke: the API tokens, from the command line. */
#ifndef WEFT_DAEMON_TOKENCMD_H
#define WEFT_DAEMON_TOKENCMD_H

/*
 * Runs "weftd token ..." with argv[0] == "token": adds a token (printing
 * only the token, one line, on standard output: it is shown this once),
 * lists the tokens (never a secret: none is stored) or revokes one, in
 * the database named by --db.  Safe while the daemon runs on the same
 * file (SQLite's locks; the daemon re-reads the tokens within a second).
 * Returns the process exit status: 0 done, 1 failed, 2 usage.
 */
int tokencmd_main(int argc, char **argv);

#endif /* WEFT_DAEMON_TOKENCMD_H */
