-- SPDX-License-Identifier: GPL-3.0-or-later
-- Migration 1: the first schema (topology, matrices, policy, plan history).
--
-- Node, link and demand order is the order the operator gave (ordinal):
-- plans are arrays parallel to the model, so the order must survive a
-- round trip.  Links refer to nodes by id; those references are checked at
-- commit (DEFERRABLE INITIALLY DEFERRED) because a topology replacement
-- deletes and re-inserts every node inside one transaction.  storage/
-- checks every reference itself first and names the culprit; the foreign
-- keys are the backstop.  Demands name nodes by id too, but without a
-- foreign key: a stored matrix outlives the topology it was written
-- against, so replacing the topology never fails or loses a matrix.  A
-- matrix is checked against the topology when it is put, and a demand
-- whose node is gone is left out of planning when the model is loaded.

CREATE TABLE meta (
	key	TEXT PRIMARY KEY NOT NULL,
	value
);
INSERT INTO meta (key, value) VALUES ('model_revision', 0);

CREATE TABLE nodes (
	id	TEXT PRIMARY KEY NOT NULL
		    CHECK (length(CAST(id AS BLOB)) BETWEEN 1 AND 128),
	ordinal	INTEGER NOT NULL UNIQUE,
	name	TEXT,
	lat	REAL,		-- degrees; NULL (with lon) when unknown
	lon	REAL,
	CHECK ((lat IS NULL) = (lon IS NULL))
);

CREATE TABLE links (
	id		TEXT PRIMARY KEY NOT NULL
			    CHECK (length(CAST(id AS BLOB)) BETWEEN 1 AND 128),
	ordinal		INTEGER NOT NULL UNIQUE,
	a		TEXT NOT NULL REFERENCES nodes (id)
			    DEFERRABLE INITIALLY DEFERRED,
	b		TEXT NOT NULL REFERENCES nodes (id)
			    DEFERRABLE INITIALLY DEFERRED,
	capacity_bps	REAL NOT NULL CHECK (capacity_bps > 0),
	te_metric	REAL NOT NULL CHECK (te_metric > 0),
	up		INTEGER NOT NULL CHECK (up IN (0, 1)),
	CHECK (a <> b)
);
CREATE INDEX links_a ON links (a);
CREATE INDEX links_b ON links (b);

CREATE TABLE matrices (
	name		TEXT PRIMARY KEY NOT NULL
			    CHECK (length(CAST(name AS BLOB)) BETWEEN 1 AND 128),
	updated_revision INTEGER NOT NULL	-- model revision of the last put
);

CREATE TABLE demands (
	matrix		TEXT NOT NULL REFERENCES matrices (name)
			    ON DELETE CASCADE,
	ordinal		INTEGER NOT NULL,
	src		TEXT NOT NULL,	-- a node id; no foreign key (above)
	dst		TEXT NOT NULL,
	rate_bps	REAL NOT NULL CHECK (rate_bps >= 0),
	priority	INTEGER NOT NULL CHECK (priority BETWEEN 0 AND 7),
	PRIMARY KEY (matrix, ordinal),
	CHECK (src <> dst)
);

-- One row at most (id 1); no row means the default policy.
CREATE TABLE policy (
	id		INTEGER PRIMARY KEY CHECK (id = 1),
	objective	TEXT NOT NULL CHECK (objective IN ('cost', 'balance')),
	headroom	REAL NOT NULL CHECK (headroom > 0 AND headroom <= 1),
	matrix		TEXT,		-- may name a matrix not (yet) stored
	balance_tol	REAL NOT NULL CHECK (balance_tol >= 0)
);

CREATE TABLE plan_history (
	plan_revision	INTEGER PRIMARY KEY,
	model_revision	INTEGER NOT NULL,
	created_at	INTEGER NOT NULL,	-- seconds since the Unix epoch
	summary_json	TEXT NOT NULL
);
