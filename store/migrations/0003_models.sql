-- Boxwright project schema, version 3: detectors trained from the
-- project's labels, kept in the project so that they survive closing it.

CREATE TABLE models (
    id             INTEGER PRIMARY KEY,
    -- The model's name is also the source name of its suggestions.
    name           TEXT    NOT NULL UNIQUE CHECK (length(name) BETWEEN 1 AND 200),
    -- Architecture and its version: weights are only read by the code that
    -- wrote them.
    architecture   TEXT    NOT NULL CHECK (length(architecture) > 0),
    -- JSON array of class names in the order of the model's outputs.
    classes        TEXT    NOT NULL,
    input_size     INTEGER NOT NULL CHECK (input_size > 0),
    -- What it learned from, for people (annotator, classes, image counts).
    trained_on     TEXT    NOT NULL DEFAULT '',
    seed           INTEGER NOT NULL DEFAULT 0,
    -- JSON array of {epoch, loss, val_ap50, seconds}: the learning curve.
    epochs         TEXT    NOT NULL DEFAULT '[]',
    val_ap50       REAL,
    weights        BLOB    NOT NULL,
    -- Checked on every read, so a damaged blob is refused, never used.
    weights_sha256 TEXT    NOT NULL,
    is_current     INTEGER NOT NULL DEFAULT 0 CHECK (is_current IN (0, 1)),
    created_at     TEXT    NOT NULL,
    updated_at     TEXT    NOT NULL
);

-- At most one model is current.
CREATE UNIQUE INDEX models_one_current ON models(is_current) WHERE is_current = 1;
