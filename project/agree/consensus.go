package agree

import (
	"fmt"
	"strings"

	"boxwright/project"
)

// MajoritySupport is the default support of a consensus among n
// annotators: a strict majority, n/2+1.
func MajoritySupport(n int) int { return n/2 + 1 }

// ConsensusOptions say how the consensus of several annotators is formed.
type ConsensusOptions struct {
	// Threshold is the IoU at which boxes of different annotators are the
	// same object.
	Threshold float64
	// MinSupport is the number of annotators who must have drawn an object;
	// 0 or less means MajoritySupport.
	MinSupport int
	// Median takes the per-coordinate median of the members' boxes instead
	// of their mean.
	Median bool
}

// ConsensusSourcePrefix starts the source of every consensus label, so
// that they can be told from labels stored under the same annotator name.
const ConsensusSourcePrefix = "consensus of "

// ConsensusLabels derives the consensus of the annotators named in who
// (in the order of each image's By) as labels: per image, objects grouped
// class-agnostically at opt.Threshold, kept when enough annotators drew
// them, with the mean or median box and the majority class. Each label's
// Source says how it was made and its Score is the share of annotators who
// drew it. ties counts objects whose class vote was tied (their Source asks
// for review). ImageID, ClassID, Box, Origin, Source and Score are set; the
// caller gives them an annotator.
func ConsensusLabels(images []ImageLabels, who []string, opt ConsensusOptions) (labels []project.Label, ties int) {
	n := len(who)
	support := opt.MinSupport
	if support <= 0 {
		support = MajoritySupport(n)
	}
	how := "mean"
	if opt.Median {
		how = "median"
	}
	source := fmt.Sprintf(ConsensusSourcePrefix+"%s (IoU ≥ %.2f, seen by ≥ %d, %s box)", strings.Join(who, ", "), opt.Threshold, support, how)
	for _, im := range images {
		boxes := make([][]project.Box, n)
		classes := make([][]int64, n)
		for i := 0; i < n; i++ {
			l := im.By[i]
			boxes[i], classes[i] = l.Boxes, l.Classes
		}
		objs := GroupObjects(boxes, classes, opt.Threshold, false)
		for _, c := range Consensus(objs, boxes, classes, n, support, opt.Median) {
			src := source
			if c.Tie {
				ties++
				src += "; class vote tied: review"
			}
			labels = append(labels, project.Label{ImageID: im.ImageID, ClassID: c.Class, Box: c.Box, Origin: project.OriginImported,
				Source: src, Score: float64(c.Support) / float64(n)})
		}
	}
	return labels, ties
}
