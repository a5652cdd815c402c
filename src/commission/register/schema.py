"""Register schema and its migrations, one step per schema version.

``PRAGMA user_version`` holds the schema version. A register made by an older
release is migrated on first use; a newer one is refused rather than damaged.
"""

from __future__ import annotations

SCHEMA_VERSION = 10

# Step n brings a register from version n-1 to n. Never edit a released step:
# add the next one.
MIGRATIONS: dict[int, str] = {
    1: """
    CREATE TABLE jobs (
        id INTEGER PRIMARY KEY,
        short_id TEXT NOT NULL UNIQUE,
        uuid TEXT NOT NULL UNIQUE,
        created_at TEXT NOT NULL,
        created_by TEXT NOT NULL,
        site TEXT NOT NULL,
        address TEXT NOT NULL DEFAULT '',
        client TEXT NOT NULL DEFAULT '',
        installer TEXT NOT NULL DEFAULT '',
        installer_contact TEXT NOT NULL DEFAULT '',
        installer_registration TEXT NOT NULL DEFAULT '',
        checklist_id TEXT NOT NULL,
        checklist_version TEXT NOT NULL,
        checklist_sha256 TEXT NOT NULL,
        checklist_text TEXT NOT NULL,
        checklist_source TEXT NOT NULL DEFAULT ''
    );
    CREATE TABLE instruments (
        id INTEGER PRIMARY KEY,
        serial TEXT NOT NULL UNIQUE,
        make TEXT NOT NULL,
        model TEXT NOT NULL,
        calibration_due TEXT NOT NULL,
        added_at TEXT NOT NULL
    );
    -- Append-only: a correction is a new entry that supersedes the old one.
    CREATE TABLE entries (
        id INTEGER PRIMARY KEY,
        uuid TEXT NOT NULL UNIQUE,
        job_id INTEGER NOT NULL REFERENCES jobs(id),
        item_id TEXT NOT NULL,
        action TEXT NOT NULL CHECK (action IN ('answer', 'skip', 'na', 'detail')),
        raw TEXT NOT NULL,
        value_json TEXT,
        unit_typed TEXT,
        instrument_id INTEGER REFERENCES instruments(id),
        at TEXT NOT NULL,
        by TEXT NOT NULL,
        supersedes INTEGER REFERENCES entries(id)
    );
    CREATE INDEX entries_by_job ON entries(job_id, item_id, id);
    CREATE TRIGGER entries_keep_update BEFORE UPDATE ON entries
        BEGIN SELECT RAISE(ABORT, 'entries are append-only'); END;
    CREATE TRIGGER entries_keep_delete BEFORE DELETE ON entries
        BEGIN SELECT RAISE(ABORT, 'entries are append-only'); END;
    -- Files and photos by SHA-256, as 1 MiB chunks, so the register stays one file.
    CREATE TABLE blobs (
        sha256 TEXT PRIMARY KEY,
        bytes INTEGER NOT NULL,
        added_at TEXT NOT NULL
    );
    CREATE TABLE blob_chunks (
        blob TEXT NOT NULL,
        seq INTEGER NOT NULL,
        data BLOB NOT NULL,
        PRIMARY KEY (blob, seq)
    );
    """,
    # 2: each entry records the computer it was typed on, so a record shows where every
    # reading was entered (a second laptop on site, an import). Older entries: ''.
    2: """
    ALTER TABLE entries ADD COLUMN host TEXT NOT NULL DEFAULT '';
    """,
    # 3: job details the handover record prints: the installer's postal address, the
    # client's contact, the site's time zone (times are shown in it), the language of the
    # homeowner's pages and a next inspection date set for this job. Older jobs: ''.
    3: """
    ALTER TABLE jobs ADD COLUMN installer_address TEXT NOT NULL DEFAULT '';
    ALTER TABLE jobs ADD COLUMN client_contact TEXT NOT NULL DEFAULT '';
    ALTER TABLE jobs ADD COLUMN timezone TEXT NOT NULL DEFAULT '';
    ALTER TABLE jobs ADD COLUMN language TEXT NOT NULL DEFAULT '';
    ALTER TABLE jobs ADD COLUMN next_inspection TEXT NOT NULL DEFAULT '';
    """,
    # 4: the instrument in use is kept with the job, so a walk stopped by Ctrl-C (or on
    # another day) resumes stamping the same instrument on its measured readings. A setting
    # of the walk, not a fact of the record: each entry still names its own instrument.
    4: """
    CREATE TABLE job_instrument (
        job_id INTEGER PRIMARY KEY REFERENCES jobs(id),
        instrument_id INTEGER REFERENCES instruments(id),
        at TEXT NOT NULL
    );
    """,
    # 5: an instrument's stated accuracy as the maker prints it, and how that figure is to
    # be read ('bound' or 'k2'), so verdicts can apply its uncertainty. Older ones: none.
    5: """
    ALTER TABLE instruments ADD COLUMN accuracy TEXT NOT NULL DEFAULT '';
    ALTER TABLE instruments ADD COLUMN accuracy_read_as TEXT NOT NULL DEFAULT '';
    """,
    # 6: an instrument may carry an export profile (how to read its files: columns, time
    # format and zone, scales), and an entry of a file item keeps the profile it was read
    # with, so the record and `verify` read the file the same way. Older entries: NULL.
    6: """
    CREATE TABLE export_profiles (
        instrument_id INTEGER PRIMARY KEY REFERENCES instruments(id),
        profile_json TEXT NOT NULL,
        updated_at TEXT NOT NULL
    );
    ALTER TABLE entries ADD COLUMN read_with TEXT;
    """,
    # 7: records name a computer by a random device id, never by its host name (issue 8):
    # the register keeps its device id in `settings`, and new entries store it in `host`.
    # `jobs.imported` says how a job came in: '' made here, 'verified' or 'unverified'
    # (imported with --unverified; shown wherever the job is shown). `jobs.recorded` keeps,
    # for an imported job, the record's own verdicts and check-logic version as JSON, so
    # they stay visible beside today's ('' for jobs made here).
    7: """
    CREATE TABLE settings (
        key TEXT PRIMARY KEY,
        value TEXT NOT NULL
    );
    ALTER TABLE jobs ADD COLUMN imported TEXT NOT NULL DEFAULT '';
    ALTER TABLE jobs ADD COLUMN recorded TEXT NOT NULL DEFAULT '';
    """,
    # 8: sync with a company register (issue 15). An item changed on two devices while
    # they were apart is flagged in `conflicts` (the job by UUID, the item, the entries
    # involved) until someone confirms it; the flags travel with sync (a union).
    8: """
    CREATE TABLE conflicts (
        job_uuid TEXT NOT NULL,
        item_id TEXT NOT NULL,
        entry_uuids TEXT NOT NULL,
        flagged_at TEXT NOT NULL,
        confirmed_by TEXT NOT NULL DEFAULT '',
        confirmed_at TEXT NOT NULL DEFAULT '',
        PRIMARY KEY (job_uuid, item_id, entry_uuids)
    );
    """,
    # 9: `jobs` at company scale (issue 15). `job_heads` keeps, per job, the key of its
    # last non-detail entry ("<entry time> <UUID>") and the current site, installer and
    # next inspection date (amendments applied), kept up to date by triggers, so listing and
    # filtering read one row per job. `job_status` caches the last status derived, with the
    # key it was derived under (last entry, checklist SHA-256, check-logic version): shown by
    # `jobs`, marked when stale, never read by `show`, `report` or `verify`.
    9: """
    CREATE TABLE job_heads (
        job_id INTEGER PRIMARY KEY REFERENCES jobs(id),
        last_entry TEXT NOT NULL DEFAULT '',
        site TEXT NOT NULL DEFAULT '',
        site_key TEXT NOT NULL DEFAULT '',
        installer TEXT NOT NULL DEFAULT '',
        installer_key TEXT NOT NULL DEFAULT '',
        next_inspection TEXT NOT NULL DEFAULT '',
        next_inspection_key TEXT NOT NULL DEFAULT ''
    );
    INSERT INTO job_heads (job_id, last_entry, site, installer, next_inspection)
        SELECT j.id, coalesce((SELECT max(e.at || ' ' || e.uuid) FROM entries e
                               WHERE e.job_id = j.id AND e.action != 'detail'), ''),
               j.site, j.installer, j.next_inspection FROM jobs j;
    UPDATE job_heads SET (site, site_key) = (
        SELECT json_extract(e.value_json, '$'), e.at || ' ' || e.uuid FROM entries e
        WHERE e.job_id = job_heads.job_id AND e.action = 'detail' AND e.item_id = 'job.site'
        ORDER BY e.at DESC, e.uuid DESC LIMIT 1)
        WHERE EXISTS (SELECT 1 FROM entries e WHERE e.job_id = job_heads.job_id
                      AND e.action = 'detail' AND e.item_id = 'job.site');
    UPDATE job_heads SET (installer, installer_key) = (
        SELECT json_extract(e.value_json, '$'), e.at || ' ' || e.uuid FROM entries e
        WHERE e.job_id = job_heads.job_id AND e.action = 'detail'
        AND e.item_id = 'job.installer' ORDER BY e.at DESC, e.uuid DESC LIMIT 1)
        WHERE EXISTS (SELECT 1 FROM entries e WHERE e.job_id = job_heads.job_id
                      AND e.action = 'detail' AND e.item_id = 'job.installer');
    UPDATE job_heads SET (next_inspection, next_inspection_key) = (
        SELECT json_extract(e.value_json, '$'), e.at || ' ' || e.uuid FROM entries e
        WHERE e.job_id = job_heads.job_id AND e.action = 'detail'
        AND e.item_id = 'job.next_inspection' ORDER BY e.at DESC, e.uuid DESC LIMIT 1)
        WHERE EXISTS (SELECT 1 FROM entries e WHERE e.job_id = job_heads.job_id
                      AND e.action = 'detail' AND e.item_id = 'job.next_inspection');
    CREATE INDEX job_heads_installer ON job_heads (installer);
    CREATE INDEX job_heads_next_inspection ON job_heads (next_inspection);
    CREATE TRIGGER job_heads_new_job AFTER INSERT ON jobs BEGIN
        INSERT INTO job_heads (job_id, site, installer, next_inspection)
        VALUES (NEW.id, NEW.site, NEW.installer, NEW.next_inspection);
    END;
    CREATE TRIGGER job_heads_new_entry AFTER INSERT ON entries BEGIN
        UPDATE job_heads SET last_entry = NEW.at || ' ' || NEW.uuid
            WHERE job_id = NEW.job_id AND NEW.action != 'detail'
            AND last_entry < NEW.at || ' ' || NEW.uuid;
        UPDATE job_heads SET site = json_extract(NEW.value_json, '$'),
            site_key = NEW.at || ' ' || NEW.uuid
            WHERE job_id = NEW.job_id AND NEW.action = 'detail' AND NEW.item_id = 'job.site'
            AND site_key < NEW.at || ' ' || NEW.uuid;
        UPDATE job_heads SET installer = json_extract(NEW.value_json, '$'),
            installer_key = NEW.at || ' ' || NEW.uuid
            WHERE job_id = NEW.job_id AND NEW.action = 'detail'
            AND NEW.item_id = 'job.installer' AND installer_key < NEW.at || ' ' || NEW.uuid;
        UPDATE job_heads SET next_inspection = json_extract(NEW.value_json, '$'),
            next_inspection_key = NEW.at || ' ' || NEW.uuid
            WHERE job_id = NEW.job_id AND NEW.action = 'detail'
            AND NEW.item_id = 'job.next_inspection'
            AND next_inspection_key < NEW.at || ' ' || NEW.uuid;
    END;
    CREATE TABLE job_status (
        job_id INTEGER PRIMARY KEY REFERENCES jobs(id),
        last_entry TEXT NOT NULL,
        checklist_sha256 TEXT NOT NULL,
        check_logic INTEGER NOT NULL,
        status TEXT NOT NULL,
        derived_at TEXT NOT NULL
    );
    CREATE INDEX job_status_status ON job_status (status);
    """,
    # 10: periodic inspection (issue 14). `jobs.baseline` holds, for a revisit job, the
    # baseline it is compared with as JSON (the baseline record's SHA-256 over its canonical
    # JSON, its job, status, whether it verified, and the readings of every earlier visit);
    # '' for other jobs. `jobs.record_sha256` is the SHA-256 of the record an imported job
    # came from, so a later revisit can name it ('' otherwise). `entries.carried` is the
    # baseline record's SHA-256 on an answer carried from it as a starting answer (NULL on
    # everything typed or imported).
    10: """
    ALTER TABLE jobs ADD COLUMN baseline TEXT NOT NULL DEFAULT '';
    ALTER TABLE jobs ADD COLUMN record_sha256 TEXT NOT NULL DEFAULT '';
    ALTER TABLE entries ADD COLUMN carried TEXT;
    """,
}
