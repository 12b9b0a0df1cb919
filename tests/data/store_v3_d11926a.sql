-- An observation store as first released: made by vascplan at commit d11926a (the first
-- release of the store, schema version 3) and dumped with sqlite3 iterdump; two findings and
-- one correction; entered_at/applied_at times set to 2026-12-01T22:40:00+00:00.
-- Tests load it to prove that an existing store upgrades in place; never regenerate it.
BEGIN TRANSACTION;
CREATE TABLE obs_batch (
	id INTEGER NOT NULL, 
	kind TEXT NOT NULL, 
	source TEXT NOT NULL, 
	unit TEXT NOT NULL, 
	entered_at TEXT NOT NULL, 
	rows INTEGER NOT NULL, 
	PRIMARY KEY (id)
);
INSERT INTO "obs_batch" VALUES(1,'import','fixture','DEMO ward','2026-12-01T22:40:00+00:00',2);
INSERT INTO "obs_batch" VALUES(2,'correct','correct 2','DEMO ward','2026-12-01T22:40:00+00:00',1);
CREATE TABLE obs_entry (
	id INTEGER NOT NULL, 
	batch_id INTEGER NOT NULL, 
	unit TEXT NOT NULL, 
	bed INTEGER NOT NULL, 
	ref TEXT NOT NULL, 
	time_utc TEXT NOT NULL, 
	time_local TEXT NOT NULL, 
	recorded_by TEXT NOT NULL, 
	item TEXT NOT NULL, 
	site TEXT NOT NULL, 
	value TEXT NOT NULL, 
	corrects INTEGER, 
	reason TEXT, 
	entered_at TEXT NOT NULL, 
	PRIMARY KEY (id), 
	FOREIGN KEY(batch_id) REFERENCES obs_batch (id), 
	FOREIGN KEY(corrects) REFERENCES obs_entry (id)
);
INSERT INTO "obs_entry" VALUES(1,1,'DEMO ward',1,'DEMO-11','2026-12-01T16:00:00+00:00','2026-12-01T16:00:00+00:00','RN-A','nirs','L','64',NULL,NULL,'2026-12-01T22:40:00+00:00');
INSERT INTO "obs_entry" VALUES(2,1,'DEMO ward',1,'DEMO-11','2026-12-01T16:00:00+00:00','2026-12-01T16:00:00+00:00','RN-A','nirs','R','61',NULL,NULL,'2026-12-01T22:40:00+00:00');
INSERT INTO "obs_entry" VALUES(3,2,'DEMO ward',1,'DEMO-11','2026-12-01T16:00:00+00:00','2026-12-01T16:00:00+00:00','RN-B','nirs','R','59',2,'misread','2026-12-01T22:40:00+00:00');
CREATE TABLE schema_version (
	version INTEGER NOT NULL, 
	description TEXT NOT NULL, 
	applied_at TEXT NOT NULL, 
	PRIMARY KEY (version)
);
INSERT INTO "schema_version" VALUES(1,'batches and entries','2026-12-01T22:40:00+00:00');
INSERT INTO "schema_version" VALUES(2,'append-only triggers','2026-12-01T22:40:00+00:00');
INSERT INTO "schema_version" VALUES(3,'one original finding per item, site and time','2026-12-01T22:40:00+00:00');
CREATE INDEX obs_entry_patient_time ON obs_entry (unit, ref, time_utc);
CREATE TRIGGER obs_entry_no_update BEFORE UPDATE ON obs_entry BEGIN SELECT RAISE(ABORT, 'observation record is append-only'); END;
CREATE TRIGGER obs_entry_no_delete BEFORE DELETE ON obs_entry BEGIN SELECT RAISE(ABORT, 'observation record is append-only'); END;
CREATE TRIGGER obs_batch_no_update BEFORE UPDATE ON obs_batch BEGIN SELECT RAISE(ABORT, 'observation record is append-only'); END;
CREATE TRIGGER obs_batch_no_delete BEFORE DELETE ON obs_batch BEGIN SELECT RAISE(ABORT, 'observation record is append-only'); END;
CREATE TRIGGER schema_version_no_update BEFORE UPDATE ON schema_version BEGIN SELECT RAISE(ABORT, 'observation record is append-only'); END;
CREATE TRIGGER schema_version_no_delete BEFORE DELETE ON schema_version BEGIN SELECT RAISE(ABORT, 'observation record is append-only'); END;
CREATE UNIQUE INDEX obs_entry_one_original ON obs_entry (unit, bed, time_utc, item, site) WHERE corrects IS NULL;
COMMIT;
