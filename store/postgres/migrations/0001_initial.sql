-- Boxwright server project schema, version 1: the tables of the SQLite
-- project at its version 4, the team (who may do what) and image bytes
-- stored in the project by content.
--
-- A project is one database. Its people reach it through one group role,
-- "<database>_team", that holds the table privileges; what each member may
-- change is decided by row-level security from the members table below,
-- in the server, whatever client they use. FORCE makes the rules hold for
-- the role that owns the tables too: only a superuser is above them.
-- Boxes are continuous pixel coordinates of the image as displayed (see
-- project.Box); times are timestamptz.

DO $$
BEGIN
    IF NOT EXISTS (SELECT 1 FROM pg_roles WHERE rolname = current_database() || '_team') THEN
        EXECUTE format('CREATE ROLE %I NOLOGIN', current_database() || '_team');
    END IF;
END
$$;

CREATE TABLE annotators (
    id         bigserial PRIMARY KEY,
    name       text NOT NULL UNIQUE,
    created_at timestamptz NOT NULL DEFAULT now()
);

-- The server roles of the team: each member logs in as their own role,
-- and labels as the annotator beside it. kind: annotator < reviewer <
-- owner, each allowed what the ones before it are.
CREATE TABLE members (
    role_name    text PRIMARY KEY,
    -- NULL until the member first labels (the project's maker, who may
    -- only manage it): an annotator of the role's name is then linked.
    annotator_id bigint UNIQUE REFERENCES annotators(id),
    kind         text NOT NULL CHECK (kind IN ('annotator', 'reviewer', 'owner')),
    added_at     timestamptz NOT NULL DEFAULT now()
);

CREATE TABLE classes (
    id       bigserial PRIMARY KEY,
    name     text NOT NULL UNIQUE,
    color    text NOT NULL,
    hot_key  text NOT NULL DEFAULT '',
    position integer NOT NULL
);

-- Image bytes by their SHA-256, in chunks so that no image is ever held
-- whole in one value or one message.
CREATE TABLE image_contents (
    sha256 text PRIMARY KEY CHECK (length(sha256) = 64),
    size   bigint NOT NULL CHECK (size >= 0),
    chunks integer NOT NULL CHECK (chunks >= 0),
    -- set when every chunk is stored; readers ignore unfinished uploads
    complete boolean NOT NULL DEFAULT false
);
CREATE TABLE image_chunks (
    sha256 text NOT NULL REFERENCES image_contents(sha256) ON DELETE CASCADE,
    n      integer NOT NULL CHECK (n >= 0),
    bytes  bytea NOT NULL,
    PRIMARY KEY (sha256, n)
);

CREATE TABLE images (
    id          bigserial PRIMARY KEY,
    path        text NOT NULL,
    sha256      text NOT NULL UNIQUE CHECK (length(sha256) = 64),
    width       integer NOT NULL CHECK (width > 0),
    height      integer NOT NULL CHECK (height > 0),
    orientation integer NOT NULL CHECK (orientation BETWEEN 1 AND 8),
    added_at    timestamptz NOT NULL DEFAULT now(),
    -- a small picture for image lists, stored once for everyone
    thumbnail   bytea
);

CREATE TABLE image_status (
    image_id     bigint NOT NULL REFERENCES images(id) ON DELETE CASCADE,
    annotator_id bigint NOT NULL REFERENCES annotators(id) ON DELETE CASCADE,
    status       text NOT NULL CHECK (status IN ('new', 'started', 'done', 'reviewed', 'skipped')),
    reviewed_by  bigint REFERENCES annotators(id) ON DELETE SET NULL,
    updated_at   timestamptz NOT NULL DEFAULT now(),
    PRIMARY KEY (image_id, annotator_id)
);
CREATE INDEX image_status_by_annotator ON image_status(annotator_id, status);

CREATE TABLE labels (
    id            bigserial PRIMARY KEY,
    image_id      bigint NOT NULL REFERENCES images(id) ON DELETE CASCADE,
    class_id      bigint NOT NULL REFERENCES classes(id),
    annotator_id  bigint NOT NULL REFERENCES annotators(id),
    x0 double precision NOT NULL, y0 double precision NOT NULL,
    x1 double precision NOT NULL, y1 double precision NOT NULL,
    origin        text NOT NULL CHECK (origin IN ('drawn', 'imported', 'accepted', 'corrected')),
    source        text NOT NULL DEFAULT '',
    score         double precision NOT NULL DEFAULT 0,
    suggestion_id bigint,
    created_at    timestamptz NOT NULL DEFAULT now(),
    updated_at    timestamptz NOT NULL DEFAULT now(),
    CHECK (x1 > x0 AND y1 > y0)
);
CREATE INDEX labels_by_image ON labels(image_id, annotator_id);
CREATE INDEX labels_by_class ON labels(class_id);
CREATE INDEX labels_by_annotator ON labels(annotator_id);

CREATE TABLE suggestions (
    id          bigserial PRIMARY KEY,
    image_id    bigint NOT NULL REFERENCES images(id) ON DELETE CASCADE,
    class_id    bigint NOT NULL REFERENCES classes(id),
    x0 double precision NOT NULL, y0 double precision NOT NULL,
    x1 double precision NOT NULL, y1 double precision NOT NULL,
    score       double precision NOT NULL,
    source      text NOT NULL,
    state       text NOT NULL CHECK (state IN ('pending', 'accepted', 'rejected', 'corrected')),
    reviewer_id bigint REFERENCES annotators(id),
    reviewed_at timestamptz,
    label_id    bigint REFERENCES labels(id) ON DELETE SET NULL,
    final_iou   double precision NOT NULL DEFAULT 0,
    created_at  timestamptz NOT NULL DEFAULT now(),
    CHECK (x1 > x0 AND y1 > y0)
);
ALTER TABLE labels ADD FOREIGN KEY (suggestion_id) REFERENCES suggestions(id) ON DELETE SET NULL;
CREATE INDEX suggestions_by_image ON suggestions(image_id, state);
CREATE INDEX suggestions_by_source ON suggestions(source, state);
CREATE INDEX suggestions_by_class ON suggestions(class_id);
CREATE INDEX suggestions_for_review ON suggestions(state, class_id, score);
CREATE INDEX suggestions_by_label ON suggestions(label_id) WHERE label_id IS NOT NULL;
CREATE INDEX labels_by_suggestion ON labels(suggestion_id) WHERE suggestion_id IS NOT NULL;

CREATE TABLE models (
    id             bigserial PRIMARY KEY,
    name           text NOT NULL UNIQUE CHECK (length(name) BETWEEN 1 AND 200),
    architecture   text NOT NULL CHECK (length(architecture) > 0),
    classes        text NOT NULL,
    input_size     integer NOT NULL CHECK (input_size > 0),
    trained_on     text NOT NULL DEFAULT '',
    seed           bigint NOT NULL DEFAULT 0,
    epochs         text NOT NULL DEFAULT '[]',
    val_ap50       double precision,
    weights        bytea NOT NULL,
    weights_sha256 text NOT NULL,
    is_current     boolean NOT NULL DEFAULT false,
    created_at     timestamptz NOT NULL DEFAULT now(),
    updated_at     timestamptz NOT NULL DEFAULT now()
);
CREATE UNIQUE INDEX models_one_current ON models(is_current) WHERE is_current;

-- The role that makes the project is its first owner (before the rules
-- below exist to refuse it). It becomes an annotator only when it labels,
-- so that a new project lists no annotators, as a new file does.
INSERT INTO members(role_name, kind) VALUES (current_user, 'owner');

-- Who is asking, for the policies: the member's annotator and rank
-- (0 for a role that is not a member, 1 annotator, 2 reviewer, 3 owner).
CREATE FUNCTION bw_annotator() RETURNS bigint LANGUAGE sql STABLE AS
$$ SELECT annotator_id FROM members WHERE role_name = current_user $$;
CREATE FUNCTION bw_rank() RETURNS integer LANGUAGE sql STABLE AS
$$ SELECT coalesce((SELECT CASE kind WHEN 'annotator' THEN 1 WHEN 'reviewer' THEN 2 WHEN 'owner' THEN 3 END
                    FROM members WHERE role_name = current_user), 0) $$;
-- A derived annotator (the consensus) has no role of its own.
CREATE FUNCTION bw_derived(a bigint) RETURNS boolean LANGUAGE sql STABLE AS
$$ SELECT NOT EXISTS (SELECT 1 FROM members WHERE annotator_id = a) $$;

-- Everyone on the team reads everything; the policies below say who
-- writes what.
DO $$
DECLARE
    t text;
    team text := quote_ident(current_database() || '_team');
BEGIN
    EXECUTE format('GRANT USAGE ON SCHEMA public TO %s', team);
    EXECUTE format('GRANT SELECT, INSERT, UPDATE, DELETE ON members TO %s', team);
    FOREACH t IN ARRAY ARRAY['annotators', 'classes', 'image_contents', 'image_chunks', 'images',
                             'image_status', 'labels', 'suggestions', 'models'] LOOP
        EXECUTE format('GRANT SELECT, INSERT, UPDATE, DELETE ON %I TO %s', t, team);
        EXECUTE format('ALTER TABLE %I ENABLE ROW LEVEL SECURITY', t);
        EXECUTE format('ALTER TABLE %I FORCE ROW LEVEL SECURITY', t);
        EXECUTE format('CREATE POLICY team_reads ON %I FOR SELECT USING (bw_rank() > 0)', t);
    END LOOP;
    EXECUTE format('GRANT USAGE ON ALL SEQUENCES IN SCHEMA public TO %s', team);
END
$$;

-- Project-wide things: only owners change them.
CREATE POLICY owners_write ON classes FOR ALL USING (bw_rank() >= 3) WITH CHECK (bw_rank() >= 3);
CREATE POLICY owners_write ON images FOR ALL USING (bw_rank() >= 3) WITH CHECK (bw_rank() >= 3);
CREATE POLICY owners_write ON image_contents FOR ALL USING (bw_rank() >= 3) WITH CHECK (bw_rank() >= 3);
CREATE POLICY owners_write ON image_chunks FOR ALL USING (bw_rank() >= 3) WITH CHECK (bw_rank() >= 3);
-- members is read by the functions the policies call, so it has no
-- policy of its own (one would call itself); a trigger keeps its changes
-- to owners.
CREATE FUNCTION bw_members_owners_only() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    IF bw_rank() < 3 AND NOT (SELECT rolsuper FROM pg_roles WHERE rolname = current_user) THEN
        RAISE EXCEPTION 'only an owner of the project changes its team' USING ERRCODE = 'insufficient_privilege';
    END IF;
    RETURN coalesce(NEW, OLD);
END
$$;
CREATE TRIGGER members_owners_only BEFORE INSERT OR UPDATE OR DELETE ON members
    FOR EACH ROW EXECUTE FUNCTION bw_members_owners_only();
-- Reviewers may add the derived annotators they compute (the consensus);
-- owners add people.
CREATE POLICY reviewers_add ON annotators FOR INSERT WITH CHECK (bw_rank() >= 2);
CREATE POLICY owners_change ON annotators FOR UPDATE USING (bw_rank() >= 3) WITH CHECK (bw_rank() >= 3);
CREATE POLICY owners_delete ON annotators FOR DELETE USING (bw_rank() >= 3);

-- Labels: each member writes only labels that carry their own annotator;
-- reviewers also the derived annotators' (the consensus); owners any, for
-- project-wide changes (merging or deleting a class).
CREATE POLICY own_labels ON labels FOR ALL
    USING (annotator_id = bw_annotator() OR (bw_rank() >= 2 AND bw_derived(annotator_id)) OR bw_rank() >= 3)
    WITH CHECK (annotator_id = bw_annotator() OR (bw_rank() >= 2 AND bw_derived(annotator_id)) OR bw_rank() >= 3);
-- Statuses: one's own; a reviewer marks others' images reviewed.
CREATE POLICY own_status ON image_status FOR ALL
    USING (annotator_id = bw_annotator() OR bw_rank() >= 2)
    WITH CHECK (annotator_id = bw_annotator() OR bw_rank() >= 2);
-- Suggestions and models: reviewers import, decide and delete them.
CREATE POLICY reviewers_write ON suggestions FOR ALL USING (bw_rank() >= 2) WITH CHECK (bw_rank() >= 2);
CREATE POLICY reviewers_write ON models FOR ALL USING (bw_rank() >= 2) WITH CHECK (bw_rank() >= 2);
