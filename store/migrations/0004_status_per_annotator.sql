-- How far each annotator has come on each image. A status belongs to an
-- annotator: "done" by one person says nothing about another's labels, and
-- an export's "checked and found empty" must be the exported annotator's.
-- images.status is kept for older readers but no longer read or written.
CREATE TABLE image_status (
    id           INTEGER PRIMARY KEY,
    image_id     INTEGER NOT NULL REFERENCES images(id) ON DELETE CASCADE,
    annotator_id INTEGER NOT NULL REFERENCES annotators(id) ON DELETE CASCADE,
    status       TEXT NOT NULL CHECK (status IN ('new', 'started', 'done', 'reviewed', 'skipped')),
    -- who marked it reviewed (a second person, or the annotator)
    reviewed_by  INTEGER REFERENCES annotators(id) ON DELETE SET NULL,
    updated_at   TEXT NOT NULL,
    UNIQUE (image_id, annotator_id)
);
CREATE INDEX image_status_by_annotator ON image_status(annotator_id, status);

-- The old project-wide status goes to every annotator who has labels on
-- the image: they are the ones who worked on it.
INSERT INTO image_status(image_id, annotator_id, status, updated_at)
SELECT DISTINCT l.image_id, l.annotator_id, i.status, strftime('%Y-%m-%dT%H:%M:%fZ', 'now')
FROM labels l JOIN images i ON i.id = l.image_id
WHERE i.status <> 'new';

-- An image marked done, reviewed or skipped without any labels was
-- checked by someone; who is known only when the project has one
-- annotator. With several, the mark is dropped rather than given to
-- people who never looked at the image.
INSERT OR IGNORE INTO image_status(image_id, annotator_id, status, updated_at)
SELECT i.id, (SELECT min(id) FROM annotators), i.status, strftime('%Y-%m-%dT%H:%M:%fZ', 'now')
FROM images i
WHERE i.status <> 'new' AND (SELECT count(*) FROM annotators) = 1
  AND NOT EXISTS (SELECT 1 FROM labels l WHERE l.image_id = i.id);
