-- SPDX-License-Identifier: GPL-3.0-or-later
-- Migration 3: shared-risk link groups on links, and survivability sweeps.
--
-- A link's SRLGs are rows of link_srlg, one per (link, SRLG number); a
-- link in no SRLG has no rows, which is what every link of an older
-- database gets.  The rows go with their link: storage/ deletes and
-- re-inserts them together with the links when the topology is replaced,
-- and ON DELETE CASCADE is the backstop.  SRLG numbers are unsigned 32-bit
-- integers, as the API gives them.
--
-- A sweep is one row of sweeps (the request, its progress and, once it has
-- finished, its report) and one row of sweep_results per scenario solved,
-- by its index in the sweep's family of scenarios.  Sweeps are not part of
-- the model: writing them never changes the model revision.  created_at
-- and finished_at are ISO 8601 UTC text ("2026-12-02T07:10:00Z"), which
-- sorts in time order.  AUTOINCREMENT: the id of a deleted sweep is never
-- given to a later one, so an address a client kept never names another
-- sweep.  A result's numbers may be NULL (a number that is not one: SQLite
-- has no NaN), and are for a failed scenario.

CREATE TABLE link_srlg (
	link	TEXT NOT NULL REFERENCES links (id) ON DELETE CASCADE,
	srlg	INTEGER NOT NULL CHECK (srlg BETWEEN 0 AND 4294967295),
	PRIMARY KEY (link, srlg)
) WITHOUT ROWID;
CREATE INDEX link_srlg_srlg ON link_srlg (srlg);

CREATE TABLE sweeps (
	id		INTEGER PRIMARY KEY AUTOINCREMENT,
	kind		TEXT NOT NULL
	    CHECK (kind IN ('links', 'nodes', 'srlgs', 'link-pairs')),
	state		TEXT NOT NULL CHECK (state IN ('running', 'done',
	    'cancelled', 'interrupted', 'failed')),
	model_revision	INTEGER NOT NULL,
	plan_revision	INTEGER NOT NULL,
	total		INTEGER NOT NULL CHECK (total >= 0),
	done		INTEGER NOT NULL DEFAULT 0
	    CHECK (done BETWEEN 0 AND total),
	elapsed_s	REAL NOT NULL DEFAULT 0 CHECK (elapsed_s >= 0),
	created_at	TEXT NOT NULL,
	finished_at	TEXT,		-- NULL while running
	params_json	TEXT NOT NULL,	-- the request, as the caller gave it
	report_json	TEXT,		-- NULL until finished with a report
	error		TEXT		-- NULL unless failed
);

CREATE TABLE sweep_results (
	sweep		INTEGER NOT NULL REFERENCES sweeps (id)
			    ON DELETE CASCADE,
	idx		INTEGER NOT NULL CHECK (idx >= 0),
	fail_json	TEXT NOT NULL,	-- what the scenario fails
	status		TEXT NOT NULL CHECK (status IN ('optimal', 'partial',
	    'empty', 'failed')),
	error		TEXT,		-- NULL unless the solve failed
	max_util	REAL,
	carried_bps	REAL,
	unserved_bps	REAL,
	total_cost	REAL,
	solve_ms	REAL,
	moved_bps	REAL,
	PRIMARY KEY (sweep, idx)
) WITHOUT ROWID;
