-- SPDX-License-Identifier: GPL-3.0-or-later
-- Migration 2: the policy gains the congestion objective, the choice of
-- formulation, the column-generation gap target and the route-stability
-- option.  SQLite cannot change a CHECK constraint in place, so the table
-- is rebuilt and its row copied (an existing policy keeps the node-arc
-- formulation it was solved with).
CREATE TABLE policy_new (
	id		INTEGER PRIMARY KEY CHECK (id = 1),
	objective	TEXT NOT NULL
	    CHECK (objective IN ('cost', 'balance', 'congestion')),
	headroom	REAL NOT NULL CHECK (headroom > 0 AND headroom <= 1),
	matrix		TEXT,		-- may name a matrix not (yet) stored
	balance_tol	REAL NOT NULL CHECK (balance_tol >= 0),
	formulation	TEXT NOT NULL DEFAULT 'arc'
	    CHECK (formulation IN ('arc', 'path')),
	gap_target	REAL NOT NULL DEFAULT 1e-7
	    CHECK (gap_target >= 0 AND gap_target <= 0.5),
	keep_paths	INTEGER NOT NULL DEFAULT 0 CHECK (keep_paths IN (0, 1)),
	keep_paths_tol	REAL NOT NULL DEFAULT 1e-3
	    CHECK (keep_paths_tol >= 0 AND keep_paths_tol <= 0.5)
);
INSERT INTO policy_new (id, objective, headroom, matrix, balance_tol)
    SELECT id, objective, headroom, matrix, balance_tol FROM policy;
DROP TABLE policy;
ALTER TABLE policy_new RENAME TO policy;
