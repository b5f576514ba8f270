package ops

import "boxwright/project"

// DefaultDuplicateIoU is the overlap (IoU) with one of the person's own
// boxes of the same class at which a new, accepted or corrected box is
// taken for a duplicate of it: 0.7 lies well above the 0.5 at which
// detection benchmarks call two boxes the same object (common practice),
// so that neighbours in a crowd are not flagged.
const DefaultDuplicateIoU = 0.7

// Cover is one of the person's own labels that already covers a box.
type Cover struct {
	LabelID int64
	Key     int64 // the session key, where the caller knows it
	IoU     float64
}

// BestCover is the label in own of the given class that overlaps b most,
// if that overlap reaches minIoU. skip names a label not to compare with
// (the box itself, when it is one of own).
func BestCover(b project.Box, classID int64, own map[int64]project.Label, minIoU float64, skip int64) (Cover, bool) {
	var best Cover
	found := false
	for k, l := range own {
		if k == skip || l.ClassID != classID {
			continue
		}
		if iou := b.IoU(l.Box); iou >= minIoU && (!found || iou > best.IoU || iou == best.IoU && k < best.Key) {
			best, found = Cover{LabelID: l.ID, Key: k, IoU: iou}, true
		}
	}
	return best, found
}

// CoveredSuggestions maps each suggestion that one of the labels covers
// (same image, same class, IoU ≥ minIoU) to its best cover. labels are
// one annotator's.
func CoveredSuggestions(gs []project.Suggestion, labels []project.Label, minIoU float64) map[int64]Cover {
	byImage := map[int64]map[int64]project.Label{}
	for _, l := range labels {
		if byImage[l.ImageID] == nil {
			byImage[l.ImageID] = map[int64]project.Label{}
		}
		byImage[l.ImageID][l.ID] = l
	}
	out := map[int64]Cover{}
	for _, g := range gs {
		if c, ok := BestCover(g.Box, g.ClassID, byImage[g.ImageID], minIoU, 0); ok {
			out[g.ID] = c
		}
	}
	return out
}
