-- Boxwright project schema, version 2: the review of model suggestions.

-- IoU of a suggestion with the label it became (1 when accepted unchanged);
-- 0 while pending or when rejected.
ALTER TABLE suggestions ADD COLUMN final_iou REAL NOT NULL DEFAULT 0;

-- Bulk actions and review queues select pending suggestions by class and a
-- score range.
CREATE INDEX suggestions_for_review ON suggestions(state, class_id, score);

-- Deleting a label sets suggestions.label_id to NULL, and deleting a
-- suggestion sets labels.suggestion_id to NULL; without these indexes each
-- such delete scans the other table. Partial, so that a big import of
-- pending suggestions (no label yet) does not pay for them.
CREATE INDEX suggestions_by_label ON suggestions(label_id) WHERE label_id IS NOT NULL;
CREATE INDEX labels_by_suggestion ON labels(suggestion_id) WHERE suggestion_id IS NOT NULL;
