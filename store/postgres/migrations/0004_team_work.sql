-- Boxwright server project schema, version 4: working at the same time.

-- "I am labelling these": a claim shows others who is on an image, and
-- lapses when its holder stops renewing it (expires_at).
CREATE TABLE claims (
    image_id     bigint NOT NULL REFERENCES images(id) ON DELETE CASCADE,
    annotator_id bigint NOT NULL REFERENCES annotators(id) ON DELETE CASCADE,
    claimed_at   timestamptz NOT NULL DEFAULT now(),
    expires_at   timestamptz NOT NULL,
    PRIMARY KEY (image_id, annotator_id)
);

-- Which annotators an image is handed to (an agreement study gives each
-- image to k of them; disjoint batches give each image to one).
CREATE TABLE assignments (
    image_id     bigint NOT NULL REFERENCES images(id) ON DELETE CASCADE,
    annotator_id bigint NOT NULL REFERENCES annotators(id) ON DELETE CASCADE,
    assigned_at  timestamptz NOT NULL DEFAULT now(),
    PRIMARY KEY (image_id, annotator_id)
);
CREATE INDEX assignments_by_annotator ON assignments(annotator_id);

DO $$
DECLARE
    t text;
    team text := quote_ident(current_database() || '_team');
BEGIN
    FOREACH t IN ARRAY ARRAY['claims', 'assignments'] LOOP
        EXECUTE format('GRANT SELECT, INSERT, UPDATE, DELETE ON %I TO %s', t, team);
        EXECUTE format('ALTER TABLE %I ENABLE ROW LEVEL SECURITY', t);
        EXECUTE format('ALTER TABLE %I FORCE ROW LEVEL SECURITY', t);
        EXECUTE format('CREATE POLICY team_reads ON %I FOR SELECT USING (bw_rank() > 0)', t);
    END LOOP;
END
$$;
CREATE POLICY own_claims ON claims FOR ALL USING (annotator_id = bw_annotator()) WITH CHECK (annotator_id = bw_annotator());
CREATE POLICY owners_assign ON assignments FOR ALL USING (bw_rank() >= 3) WITH CHECK (bw_rank() >= 3);

-- Every change others must see is announced on channel "boxwright" when
-- its transaction commits, once per image and annotator a statement
-- touched, as {"t": table, "i": image id, "a": annotator id or null}; an
-- open window then reads that image again (PostgreSQL manual, NOTIFY:
-- delivered on commit; CREATE TRIGGER: transition tables). One statement
-- of a 200,000-box import announces each image once, not each box.
CREATE FUNCTION bw_announce() RETURNS trigger LANGUAGE plpgsql AS $$
DECLARE
    p text;
BEGIN
    IF TG_OP IN ('INSERT', 'UPDATE') THEN
        FOR p IN SELECT DISTINCT json_build_object('t', TG_TABLE_NAME, 'i', (to_jsonb(n) ->> 'image_id')::bigint,
                                                   'a', (to_jsonb(n) ->> 'annotator_id')::bigint)::text FROM new_rows n LOOP
            PERFORM pg_notify('boxwright', p);
        END LOOP;
    END IF;
    IF TG_OP IN ('DELETE', 'UPDATE') THEN
        FOR p IN SELECT DISTINCT json_build_object('t', TG_TABLE_NAME, 'i', (to_jsonb(o) ->> 'image_id')::bigint,
                                                   'a', (to_jsonb(o) ->> 'annotator_id')::bigint)::text FROM old_rows o LOOP
            PERFORM pg_notify('boxwright', p);
        END LOOP;
    END IF;
    RETURN NULL;
END
$$;
DO $$
DECLARE
    t text;
BEGIN
    FOREACH t IN ARRAY ARRAY['labels', 'image_status', 'suggestions', 'claims', 'assignments'] LOOP
        EXECUTE format('CREATE TRIGGER %I AFTER INSERT ON %I REFERENCING NEW TABLE AS new_rows FOR EACH STATEMENT EXECUTE FUNCTION bw_announce()', t || '_announce_insert', t);
        EXECUTE format('CREATE TRIGGER %I AFTER UPDATE ON %I REFERENCING OLD TABLE AS old_rows NEW TABLE AS new_rows FOR EACH STATEMENT EXECUTE FUNCTION bw_announce()', t || '_announce_update', t);
        EXECUTE format('CREATE TRIGGER %I AFTER DELETE ON %I REFERENCING OLD TABLE AS old_rows FOR EACH STATEMENT EXECUTE FUNCTION bw_announce()', t || '_announce_delete', t);
    END LOOP;
END
$$;
