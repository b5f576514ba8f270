-- Boxwright server project schema, version 5: a project that
-- `boxwright copy` is still filling. The copy writes the one row when it
-- starts and deletes it when everything is in; while the row is there,
-- Open refuses the project, so that a copy cut off half-way (a lost
-- connection, a killed program) is never taken for a whole project.
CREATE TABLE copy_unfinished (
    only_row   boolean PRIMARY KEY DEFAULT true CHECK (only_row),
    source     text NOT NULL,
    started_at timestamptz NOT NULL DEFAULT now()
);

DO $$
DECLARE
    team text := quote_ident(current_database() || '_team');
BEGIN
    EXECUTE format('GRANT SELECT, INSERT, UPDATE, DELETE ON copy_unfinished TO %s', team);
END
$$;
ALTER TABLE copy_unfinished ENABLE ROW LEVEL SECURITY;
ALTER TABLE copy_unfinished FORCE ROW LEVEL SECURITY;
-- Everyone who may open the project sees the mark; only owners (who make
-- projects and copy into them) set or clear it.
CREATE POLICY team_reads ON copy_unfinished FOR SELECT USING ((SELECT bw_rank()) > 0);
CREATE POLICY owners_write ON copy_unfinished FOR ALL USING ((SELECT bw_rank()) >= 3) WITH CHECK ((SELECT bw_rank()) >= 3);
