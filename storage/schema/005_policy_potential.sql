-- SPDX-License-Identifier: GPL-3.0-or-later
-- Migration 5: the policy may choose the potential method ('potential',
-- daemon/engine/form_pot.c) for very large matrices.  SQLite cannot
-- change a CHECK constraint in place, so the table is rebuilt with every
-- column copied.
CREATE TABLE policy_new (
	id		INTEGER PRIMARY KEY CHECK (id = 1),
	objective	TEXT NOT NULL
	    CHECK (objective IN ('cost', 'balance', 'congestion')),
	headroom	REAL NOT NULL CHECK (headroom > 0 AND headroom <= 1),
	matrix		TEXT,		-- may name a matrix not (yet) stored
	balance_tol	REAL NOT NULL CHECK (balance_tol >= 0),
	formulation	TEXT NOT NULL DEFAULT 'arc'
	    CHECK (formulation IN ('arc', 'path', 'potential')),
	gap_target	REAL NOT NULL DEFAULT 1e-7
	    CHECK (gap_target >= 0 AND gap_target <= 0.5),
	keep_paths	INTEGER NOT NULL DEFAULT 0 CHECK (keep_paths IN (0, 1)),
	keep_paths_tol	REAL NOT NULL DEFAULT 1e-3
	    CHECK (keep_paths_tol >= 0 AND keep_paths_tol <= 0.5)
);
INSERT INTO policy_new (id, objective, headroom, matrix, balance_tol,
    formulation, gap_target, keep_paths, keep_paths_tol)
    SELECT id, objective, headroom, matrix, balance_tol, formulation,
    gap_target, keep_paths, keep_paths_tol FROM policy;
DROP TABLE policy;
ALTER TABLE policy_new RENAME TO policy;
