-- Boxwright server project schema, version 2: when an unfinished upload
-- of image bytes was last worked on, so that one left behind by a client
-- that stopped (cancelled, cut off, crashed) can be told from one that
-- another client is sending now, and cleaned after a day.
ALTER TABLE image_contents ADD COLUMN touched_at timestamptz NOT NULL DEFAULT now();
CREATE INDEX image_contents_unfinished ON image_contents(touched_at) WHERE NOT complete;
