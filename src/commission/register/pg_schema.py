"""The PostgreSQL register's schema, one migration step per version (never edit a
released step; add the next one).

Its version lives in ``commission_schema`` (PostgreSQL has no ``user_version``). The
tables mirror the SQLite register's latest schema, with what a shared server needs on
top: text compared byte-wise (``COLLATE "C"``, so entry times and UUIDs order the same
as in SQLite whatever the server's locale), append-only entries enforced by a trigger AND
by privileges (nobody but the owner may update, delete or truncate), and the device
prefixes that keep short job ids unique across a company's laptops.
"""

from __future__ import annotations

PG_SCHEMA_VERSION = 6

PG_MIGRATIONS: dict[int, str] = {
    1: """
    CREATE TABLE jobs (
        id BIGINT GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
        short_id TEXT COLLATE "C" NOT NULL UNIQUE,
        uuid TEXT COLLATE "C" NOT NULL UNIQUE,
        created_at TEXT COLLATE "C" NOT NULL,
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
        checklist_source TEXT NOT NULL DEFAULT '',
        installer_address TEXT NOT NULL DEFAULT '',
        client_contact TEXT NOT NULL DEFAULT '',
        timezone TEXT NOT NULL DEFAULT '',
        language TEXT NOT NULL DEFAULT '',
        next_inspection TEXT NOT NULL DEFAULT '',
        imported TEXT NOT NULL DEFAULT '',
        recorded TEXT NOT NULL DEFAULT '',
        -- the database role of the installer the office assigned the job to ('' = none)
        assigned_to TEXT NOT NULL DEFAULT ''
    );
    CREATE TABLE instruments (
        id BIGINT GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
        serial TEXT NOT NULL UNIQUE,
        make TEXT NOT NULL,
        model TEXT NOT NULL,
        calibration_due TEXT NOT NULL,
        added_at TEXT NOT NULL,
        accuracy TEXT NOT NULL DEFAULT '',
        accuracy_read_as TEXT NOT NULL DEFAULT ''
    );
    CREATE TABLE entries (
        id BIGINT GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
        uuid TEXT COLLATE "C" NOT NULL UNIQUE,
        job_id BIGINT NOT NULL REFERENCES jobs(id),
        item_id TEXT COLLATE "C" NOT NULL,
        action TEXT NOT NULL CHECK (action IN ('answer', 'skip', 'na', 'detail')),
        raw TEXT NOT NULL,
        value_json TEXT,
        unit_typed TEXT,
        instrument_id BIGINT REFERENCES instruments(id),
        at TEXT COLLATE "C" NOT NULL,
        by TEXT NOT NULL,
        supersedes BIGINT REFERENCES entries(id),
        host TEXT NOT NULL DEFAULT '',
        read_with TEXT
    );
    CREATE INDEX entries_by_job ON entries (job_id, at, uuid);
    CREATE FUNCTION commission_append_only() RETURNS trigger LANGUAGE plpgsql AS $$
        BEGIN RAISE EXCEPTION 'entries are append-only'; END $$;
    CREATE TRIGGER entries_keep_update BEFORE UPDATE OR DELETE ON entries
        FOR EACH ROW EXECUTE FUNCTION commission_append_only();
    CREATE TRIGGER entries_keep_truncate BEFORE TRUNCATE ON entries
        FOR EACH STATEMENT EXECUTE FUNCTION commission_append_only();
    REVOKE UPDATE, DELETE, TRUNCATE ON entries FROM PUBLIC;
    CREATE TABLE job_instrument (
        job_id BIGINT PRIMARY KEY REFERENCES jobs(id),
        instrument_id BIGINT REFERENCES instruments(id),
        at TEXT NOT NULL
    );
    CREATE TABLE export_profiles (
        instrument_id BIGINT PRIMARY KEY REFERENCES instruments(id),
        profile_json TEXT NOT NULL,
        updated_at TEXT NOT NULL
    );
    CREATE TABLE blobs (
        sha256 TEXT COLLATE "C" PRIMARY KEY,
        bytes BIGINT NOT NULL,
        added_at TEXT NOT NULL
    );
    CREATE TABLE blob_chunks (
        blob TEXT COLLATE "C" NOT NULL,
        seq INTEGER NOT NULL,
        data BYTEA NOT NULL,
        PRIMARY KEY (blob, seq)
    );
    CREATE TABLE settings (
        key TEXT PRIMARY KEY,
        value TEXT NOT NULL
    );
    -- Every device that joined the company register, with the prefix of the short job
    -- ids it makes from then on (given once, never reused).
    CREATE TABLE devices (
        device_id TEXT PRIMARY KEY,
        prefix TEXT COLLATE "C" NOT NULL UNIQUE,
        joined_at TEXT NOT NULL,
        joined_by TEXT NOT NULL DEFAULT current_user
    );
    -- An item changed on two devices while they were apart: flagged until confirmed.
    CREATE TABLE conflicts (
        job_uuid TEXT COLLATE "C" NOT NULL,
        item_id TEXT COLLATE "C" NOT NULL,
        entry_uuids TEXT NOT NULL,
        flagged_at TEXT NOT NULL,
        confirmed_by TEXT NOT NULL DEFAULT '',
        confirmed_at TEXT NOT NULL DEFAULT '',
        PRIMARY KEY (job_uuid, item_id, entry_uuids)
    );
    -- One walk per job across devices: a lease with an expiry.
    CREATE TABLE leases (
        job_uuid TEXT COLLATE "C" PRIMARY KEY,
        device_id TEXT NOT NULL,
        holder TEXT NOT NULL,
        since TEXT NOT NULL,
        expires TEXT NOT NULL
    );
    """,
    # 2: who may do what (issue 15). Three group roles; a person's login role is made a
    # member of one (GRANT commission_installer TO alice). Nobody but the owner may update
    # or delete an entry. Row-level security: an installer sees and writes only the jobs
    # assigned to them; reviewers read every job and add review entries
    # (countersignatures); the office creates and assigns jobs and amends their details.
    # Roles are cluster-wide, so they are made only when missing.
    2: """
    DO $$ BEGIN
        IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = 'commission_installer') THEN
            CREATE ROLE commission_installer NOLOGIN; END IF;
        IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = 'commission_reviewer') THEN
            CREATE ROLE commission_reviewer NOLOGIN; END IF;
        IF NOT EXISTS (SELECT FROM pg_roles WHERE rolname = 'commission_office') THEN
            CREATE ROLE commission_office NOLOGIN; END IF;
    END $$;
    REVOKE ALL ON ALL TABLES IN SCHEMA public FROM PUBLIC;
    GRANT SELECT ON ALL TABLES IN SCHEMA public
        TO commission_installer, commission_reviewer, commission_office;
    GRANT INSERT ON entries, blobs, blob_chunks, conflicts, leases, devices, settings,
        job_instrument, export_profiles
        TO commission_installer, commission_reviewer, commission_office;
    GRANT UPDATE ON conflicts, leases, job_instrument, export_profiles, blob_chunks
        TO commission_installer, commission_reviewer, commission_office;
    GRANT DELETE ON leases, blob_chunks
        TO commission_installer, commission_reviewer, commission_office;
    GRANT INSERT ON jobs, instruments TO commission_installer, commission_office;
    GRANT UPDATE (assigned_to) ON jobs TO commission_office;

    ALTER TABLE jobs ENABLE ROW LEVEL SECURITY;
    CREATE POLICY installer_reads_own ON jobs FOR SELECT TO commission_installer
        USING (assigned_to = current_user);
    CREATE POLICY installer_adds_own ON jobs FOR INSERT TO commission_installer
        WITH CHECK (assigned_to = current_user);
    CREATE POLICY staff_read_all ON jobs FOR SELECT
        TO commission_reviewer, commission_office USING (true);
    CREATE POLICY office_adds ON jobs FOR INSERT TO commission_office WITH CHECK (true);
    CREATE POLICY office_assigns ON jobs FOR UPDATE TO commission_office
        USING (true) WITH CHECK (true);

    ALTER TABLE entries ENABLE ROW LEVEL SECURITY;
    CREATE POLICY installer_reads_own ON entries FOR SELECT TO commission_installer
        USING (job_id IN (SELECT id FROM jobs WHERE assigned_to = current_user));
    CREATE POLICY installer_adds_own ON entries FOR INSERT TO commission_installer
        WITH CHECK (job_id IN (SELECT id FROM jobs WHERE assigned_to = current_user));
    CREATE POLICY staff_read_all ON entries FOR SELECT
        TO commission_reviewer, commission_office USING (true);
    CREATE POLICY reviewer_adds_review ON entries FOR INSERT TO commission_reviewer
        WITH CHECK (item_id LIKE 'review.%');
    CREATE POLICY office_adds_details ON entries FOR INSERT TO commission_office
        WITH CHECK (action = 'detail');

    ALTER TABLE conflicts ENABLE ROW LEVEL SECURITY;
    CREATE POLICY installer_own ON conflicts TO commission_installer
        USING (job_uuid IN (SELECT uuid FROM jobs WHERE assigned_to = current_user));
    CREATE POLICY staff_all ON conflicts TO commission_reviewer, commission_office
        USING (true);

    -- a file's chunks arrive under a provisional name and are renamed (or dropped when
    -- the file is already here): only provisional rows may change
    ALTER TABLE blob_chunks ENABLE ROW LEVEL SECURITY;
    CREATE POLICY read_all ON blob_chunks FOR SELECT USING (true);
    CREATE POLICY add_all ON blob_chunks FOR INSERT WITH CHECK (true);
    CREATE POLICY rename_provisional ON blob_chunks FOR UPDATE
        USING (blob LIKE 'partial-%') WITH CHECK (true);
    CREATE POLICY drop_provisional ON blob_chunks FOR DELETE USING (blob LIKE 'partial-%');
    """,
    # 3: `jobs` at company scale: job heads kept by triggers and the status cache (see
    # SQLite step 9 for what each holds). Heads follow the jobs' row-level security.
    3: """
    CREATE TABLE job_heads (
        job_id BIGINT PRIMARY KEY REFERENCES jobs(id),
        last_entry TEXT COLLATE "C" NOT NULL DEFAULT '',
        site TEXT NOT NULL DEFAULT '',
        site_key TEXT COLLATE "C" NOT NULL DEFAULT '',
        installer TEXT NOT NULL DEFAULT '',
        installer_key TEXT COLLATE "C" NOT NULL DEFAULT '',
        next_inspection TEXT NOT NULL DEFAULT '',
        next_inspection_key TEXT COLLATE "C" NOT NULL DEFAULT ''
    );
    INSERT INTO job_heads (job_id, last_entry, site, installer, next_inspection)
        SELECT j.id, coalesce((SELECT max(e.at || ' ' || e.uuid) FROM entries e
                               WHERE e.job_id = j.id AND e.action != 'detail'), ''),
               j.site, j.installer, j.next_inspection FROM jobs j;
    CREATE INDEX job_heads_installer ON job_heads (installer);
    CREATE INDEX job_heads_next_inspection ON job_heads (next_inspection);
    CREATE FUNCTION commission_job_head() RETURNS trigger LANGUAGE plpgsql
        SECURITY DEFINER SET search_path = public AS $$
    BEGIN
        IF TG_TABLE_NAME = 'jobs' THEN
            INSERT INTO job_heads (job_id, site, installer, next_inspection)
            VALUES (NEW.id, NEW.site, NEW.installer, NEW.next_inspection);
            RETURN NEW;
        END IF;
        IF NEW.action != 'detail' THEN
            UPDATE job_heads SET last_entry = NEW.at || ' ' || NEW.uuid
                WHERE job_id = NEW.job_id AND last_entry < NEW.at || ' ' || NEW.uuid;
        ELSIF NEW.item_id = 'job.site' THEN
            UPDATE job_heads SET site = NEW.value_json::json #>> '{}',
                site_key = NEW.at || ' ' || NEW.uuid
                WHERE job_id = NEW.job_id AND site_key < NEW.at || ' ' || NEW.uuid;
        ELSIF NEW.item_id = 'job.installer' THEN
            UPDATE job_heads SET installer = NEW.value_json::json #>> '{}',
                installer_key = NEW.at || ' ' || NEW.uuid
                WHERE job_id = NEW.job_id AND installer_key < NEW.at || ' ' || NEW.uuid;
        ELSIF NEW.item_id = 'job.next_inspection' THEN
            UPDATE job_heads SET next_inspection = NEW.value_json::json #>> '{}',
                next_inspection_key = NEW.at || ' ' || NEW.uuid
                WHERE job_id = NEW.job_id
                AND next_inspection_key < NEW.at || ' ' || NEW.uuid;
        END IF;
        RETURN NEW;
    END $$;
    CREATE TRIGGER job_heads_new_job AFTER INSERT ON jobs
        FOR EACH ROW EXECUTE FUNCTION commission_job_head();
    CREATE TRIGGER job_heads_new_entry AFTER INSERT ON entries
        FOR EACH ROW EXECUTE FUNCTION commission_job_head();
    CREATE TABLE job_status (
        job_id BIGINT PRIMARY KEY REFERENCES jobs(id),
        last_entry TEXT COLLATE "C" NOT NULL,
        checklist_sha256 TEXT NOT NULL,
        check_logic INTEGER NOT NULL,
        status TEXT NOT NULL,
        derived_at TEXT NOT NULL
    );
    CREATE INDEX job_status_status ON job_status (status);
    GRANT SELECT ON job_heads TO commission_installer, commission_reviewer,
        commission_office;
    ALTER TABLE job_heads ENABLE ROW LEVEL SECURITY;
    ALTER TABLE job_status ENABLE ROW LEVEL SECURITY;
    CREATE POLICY installer_own ON job_heads TO commission_installer
        USING (job_id IN (SELECT id FROM jobs WHERE assigned_to = current_user));
    CREATE POLICY staff_all ON job_heads TO commission_reviewer, commission_office
        USING (true);
    CREATE POLICY installer_own ON job_status TO commission_installer
        USING (job_id IN (SELECT id FROM jobs WHERE assigned_to = current_user));
    CREATE POLICY staff_all ON job_status TO commission_reviewer, commission_office
        USING (true);
    GRANT SELECT, INSERT, UPDATE ON job_status TO commission_installer,
        commission_reviewer, commission_office;
    """,
    # 4: the job heads follow new entries once per statement (a transition table) instead
    # of once per row: a sync's batch of thousands of entries updates each job's head once.
    4: """
    DROP TRIGGER job_heads_new_entry ON entries;
    CREATE FUNCTION commission_job_heads_batch() RETURNS trigger LANGUAGE plpgsql
        SECURITY DEFINER SET search_path = public AS $$
    BEGIN
        UPDATE job_heads h SET last_entry = m.k
            FROM (SELECT job_id, max(at || ' ' || uuid) AS k FROM new_rows
                  WHERE action != 'detail' GROUP BY job_id) m
            WHERE h.job_id = m.job_id AND h.last_entry < m.k;
        IF NOT EXISTS (SELECT 1 FROM new_rows WHERE action = 'detail') THEN
            RETURN NULL;  -- a reading: no detail to follow (the walk's usual case)
        END IF;
        UPDATE job_heads h SET site = d.v, site_key = d.k
            FROM (SELECT DISTINCT ON (job_id) job_id, value_json::json #>> '{}' AS v,
                         at || ' ' || uuid AS k FROM new_rows
                  WHERE action = 'detail' AND item_id = 'job.site'
                  ORDER BY job_id, at DESC, uuid DESC) d
            WHERE h.job_id = d.job_id AND h.site_key < d.k;
        UPDATE job_heads h SET installer = d.v, installer_key = d.k
            FROM (SELECT DISTINCT ON (job_id) job_id, value_json::json #>> '{}' AS v,
                         at || ' ' || uuid AS k FROM new_rows
                  WHERE action = 'detail' AND item_id = 'job.installer'
                  ORDER BY job_id, at DESC, uuid DESC) d
            WHERE h.job_id = d.job_id AND h.installer_key < d.k;
        UPDATE job_heads h SET next_inspection = d.v, next_inspection_key = d.k
            FROM (SELECT DISTINCT ON (job_id) job_id, value_json::json #>> '{}' AS v,
                         at || ' ' || uuid AS k FROM new_rows
                  WHERE action = 'detail' AND item_id = 'job.next_inspection'
                  ORDER BY job_id, at DESC, uuid DESC) d
            WHERE h.job_id = d.job_id AND h.next_inspection_key < d.k;
        RETURN NULL;
    END $$;
    CREATE TRIGGER job_heads_new_entries AFTER INSERT ON entries
        REFERENCING NEW TABLE AS new_rows
        FOR EACH STATEMENT EXECUTE FUNCTION commission_job_heads_batch();
    """,
    # 5: periodic inspection (issue 14), as SQLite step 10: a revisit job's baseline (JSON),
    # the SHA-256 of the record an imported job came from, and on an entry carried from the
    # baseline as a starting answer, the baseline record's SHA-256.
    5: """
    ALTER TABLE jobs ADD COLUMN baseline TEXT NOT NULL DEFAULT '';
    ALTER TABLE jobs ADD COLUMN record_sha256 TEXT NOT NULL DEFAULT '';
    ALTER TABLE entries ADD COLUMN carried TEXT;
    """,
    # 6: leases follow the jobs' row-level security, as entries and conflicts do: an
    # installer sees, takes, renews and gives back only the leases of jobs assigned to
    # them (before this, any installer could read who walks which job of the company);
    # reviewers and the office see and manage every lease.
    6: """
    ALTER TABLE leases ENABLE ROW LEVEL SECURITY;
    CREATE POLICY installer_own ON leases TO commission_installer
        USING (job_uuid IN (SELECT uuid FROM jobs WHERE assigned_to = current_user))
        WITH CHECK (job_uuid IN (SELECT uuid FROM jobs WHERE assigned_to = current_user));
    CREATE POLICY staff_all ON leases TO commission_reviewer, commission_office
        USING (true);
    """,
}
