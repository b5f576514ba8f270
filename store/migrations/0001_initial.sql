-- Boxwright project schema, version 1.
-- Times are RFC 3339 UTC text; boxes are continuous pixel coordinates of the
-- image as displayed (see project.Box).

CREATE TABLE classes (
    id       INTEGER PRIMARY KEY,
    name     TEXT NOT NULL UNIQUE,
    color    TEXT NOT NULL,              -- "#rrggbb"
    hot_key  TEXT NOT NULL DEFAULT '',
    position INTEGER NOT NULL            -- display order
);

CREATE TABLE annotators (
    id         INTEGER PRIMARY KEY,
    name       TEXT NOT NULL UNIQUE,
    created_at TEXT NOT NULL
);

CREATE TABLE images (
    id          INTEGER PRIMARY KEY,
    path        TEXT NOT NULL,
    sha256      TEXT NOT NULL UNIQUE CHECK (length(sha256) = 64),
    width       INTEGER NOT NULL CHECK (width > 0),
    height      INTEGER NOT NULL CHECK (height > 0),
    orientation INTEGER NOT NULL CHECK (orientation BETWEEN 1 AND 8),
    status      TEXT NOT NULL CHECK (status IN ('new', 'started', 'done', 'reviewed', 'skipped')),
    added_at    TEXT NOT NULL
);

CREATE TABLE labels (
    id            INTEGER PRIMARY KEY,
    image_id      INTEGER NOT NULL REFERENCES images(id) ON DELETE CASCADE,
    class_id      INTEGER NOT NULL REFERENCES classes(id),
    annotator_id  INTEGER NOT NULL REFERENCES annotators(id),
    x0 REAL NOT NULL, y0 REAL NOT NULL, x1 REAL NOT NULL, y1 REAL NOT NULL,
    origin        TEXT NOT NULL CHECK (origin IN ('drawn', 'imported', 'accepted', 'corrected')),
    source        TEXT NOT NULL DEFAULT '',
    score         REAL NOT NULL DEFAULT 0,
    suggestion_id INTEGER REFERENCES suggestions(id) ON DELETE SET NULL,
    created_at    TEXT NOT NULL,
    updated_at    TEXT NOT NULL,
    CHECK (x1 > x0 AND y1 > y0)
);
CREATE INDEX labels_by_image ON labels(image_id, annotator_id);
CREATE INDEX labels_by_class ON labels(class_id);
CREATE INDEX labels_by_annotator ON labels(annotator_id);

CREATE TABLE suggestions (
    id          INTEGER PRIMARY KEY,
    image_id    INTEGER NOT NULL REFERENCES images(id) ON DELETE CASCADE,
    class_id    INTEGER NOT NULL REFERENCES classes(id),
    x0 REAL NOT NULL, y0 REAL NOT NULL, x1 REAL NOT NULL, y1 REAL NOT NULL,
    score       REAL NOT NULL,
    source      TEXT NOT NULL,
    state       TEXT NOT NULL CHECK (state IN ('pending', 'accepted', 'rejected', 'corrected')),
    reviewer_id INTEGER REFERENCES annotators(id),
    reviewed_at TEXT,
    label_id    INTEGER REFERENCES labels(id) ON DELETE SET NULL,
    created_at  TEXT NOT NULL,
    CHECK (x1 > x0 AND y1 > y0)
);
CREATE INDEX suggestions_by_image ON suggestions(image_id, state);
CREATE INDEX suggestions_by_source ON suggestions(source, state);
CREATE INDEX suggestions_by_class ON suggestions(class_id);
