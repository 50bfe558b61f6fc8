-- SPDX-License-Identifier: GPL-3.0-or-later
-- Migration 4: API tokens and the audit log of writes.
--
-- A token is shown once, when it is made (weftd token add), and never
-- stored: a row keeps its public selector (the part of the token that
-- names the row, so checking a token costs one hash), a random salt and
-- SHA-256(salt || token text).  A revoked token keeps its row, with
-- revoked_at set, so the audit log's token ids stay meaningful.
-- AUTOINCREMENT: an id is never given to a later token.  Times are ISO
-- 8601 UTC text ("2026-12-02T07:10:00Z"), which sorts in time order.
--
-- audit has one row per write request the daemon answered, accepted or
-- refused: who (the token's name, "token N" for a token without one;
-- without a token "local" while none is needed, else "anonymous";
-- "invalid" for a token that was refused), the
-- token id when one was accepted, the client address, method, path and
-- status, and the model revision the write made (NULL when it made none).

CREATE TABLE tokens (
	id		INTEGER PRIMARY KEY AUTOINCREMENT,
	selector	TEXT NOT NULL UNIQUE
	    CHECK (length(selector) = 16),
	role		TEXT NOT NULL
	    CHECK (role IN ('read', 'operate', 'admin')),
	name		TEXT NOT NULL DEFAULT ''
	    CHECK (length(CAST(name AS BLOB)) <= 64),
	salt		BLOB NOT NULL CHECK (length(salt) = 16),
	hash		BLOB NOT NULL CHECK (length(hash) = 32),
	created_at	TEXT NOT NULL,
	revoked_at	TEXT		-- NULL while the token is valid
);

CREATE TABLE audit (
	id		INTEGER PRIMARY KEY AUTOINCREMENT,
	at		TEXT NOT NULL,
	who		TEXT NOT NULL,
	token_id	INTEGER,	-- tokens (id); no foreign key: the
					-- log must never refuse a row
	client		TEXT NOT NULL DEFAULT '',
	method		TEXT NOT NULL,
	path		TEXT NOT NULL,
	status		INTEGER NOT NULL,
	model_revision	INTEGER,	-- NULL: the request made no revision
	request_id	TEXT NOT NULL DEFAULT ''
);
