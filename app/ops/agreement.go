package ops

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"sync"

	"boxwright/app/backend"
	"boxwright/project"
	"boxwright/project/agree"
)

// ConsensusName is the derived annotator that holds the consensus.
const ConsensusName = "consensus"

// AgreementData is what a comparison reads from a project.
type AgreementData struct {
	Annotators []project.Annotator
	classes    []project.Class
	className  map[int64]string
	Images     []agree.ImageLabels
}

// LoadAgreement reads the boxes of the named annotators, grouped by image.
func LoadAgreement(ctx context.Context, st backend.Project, names []string) (AgreementData, error) {
	var d AgreementData
	if len(names) < 2 {
		return d, errNoAnnotators
	}
	var ids []int64
	for _, n := range names {
		a, err := st.AnnotatorByName(ctx, n)
		if err != nil {
			return d, err
		}
		if slices.Contains(ids, a.ID) {
			return d, fmt.Errorf("annotator %q is named twice", n)
		}
		ids = append(ids, a.ID)
		d.Annotators = append(d.Annotators, a)
	}
	cs, err := st.Classes(ctx)
	if err != nil {
		return d, err
	}
	d.classes, d.className = cs, map[int64]string{}
	for _, c := range cs {
		d.className[c.ID] = c.Name
	}
	// The images' names are read while the boxes are.
	names2 := map[int64]string{}
	imagesDone := make(chan error, 1)
	go func() {
		ims, err := st.Images(ctx)
		for _, im := range ims {
			names2[im.ID] = filepath.ToSlash(im.Path)
		}
		imagesDone <- err
	}()
	ibs, err := st.BoxesByImage(ctx, ids)
	if err := <-imagesDone; err != nil {
		return d, err
	}
	if err != nil {
		return d, err
	}
	// Each image's boxes, annotator by annotator in the order stored, are
	// carved from two arrays, each annotator's part sized beforehand;
	// runs of images are done side by side.
	start := make([]int, len(ibs)+1)
	for i, ib := range ibs {
		start[i+1] = start[i] + len(ib.Boxes)
	}
	n := len(names)
	boxes, classes := make([]project.Box, start[len(ibs)]), make([]int64, start[len(ibs)])
	by := make([]agree.Labels, len(ibs)*n)
	who := func(id int64) int {
		for i, a := range ids {
			if a == id {
				return i
			}
		}
		return 0
	}
	d.Images = make([]agree.ImageLabels, len(ibs))
	fill := func(lo, hi int) {
		count := make([]int, n)
		for i := lo; i < hi; i++ {
			ib := ibs[i]
			clear(count)
			for _, b := range ib.Boxes {
				count[who(b.AnnotatorID)]++
			}
			im := agree.ImageLabels{ImageID: ib.ImageID, Name: names2[ib.ImageID], By: by[i*n : (i+1)*n : (i+1)*n]}
			off := start[i]
			for k, c := range count {
				if c > 0 {
					im.By[k] = agree.Labels{Boxes: boxes[off : off : off+c], Classes: classes[off : off : off+c]}
					off += c
				}
			}
			for _, b := range ib.Boxes {
				l := &im.By[who(b.AnnotatorID)]
				l.Boxes = append(l.Boxes, b.Box)
				l.Classes = append(l.Classes, b.ClassID)
			}
			d.Images[i] = im
		}
	}
	workers := 1
	if len(ibs) >= 4096 {
		workers = runtime.GOMAXPROCS(0)
	}
	var wg sync.WaitGroup
	for w := range workers {
		wg.Go(func() { fill(w*len(ibs)/workers, (w+1)*len(ibs)/workers) })
	}
	wg.Wait()
	return d, ctx.Err()
}

// ClassOrder is the project's class IDs in display order.
func (d AgreementData) ClassOrder() []int64 {
	var out []int64
	for _, c := range d.classes {
		out = append(out, c.ID)
	}
	return out
}

// Name is a class's name, or "class N" for one the project no longer has.
func (d AgreementData) Name(class int64) string {
	if n, ok := d.className[class]; ok {
		return n
	}
	return fmt.Sprintf("class %d", class)
}

// Names are the names of classes, in the order given.
func (d AgreementData) Names(classes []int64) []string {
	out := make([]string, len(classes))
	for i, c := range classes {
		out[i] = d.Name(c)
	}
	return out
}

// StoreConsensus recomputes the consensus annotator's labels.
func StoreConsensus(ctx context.Context, st backend.Project, names []string, iou float64, minSupport int, median bool) (int, int, error) {
	d, err := LoadAgreement(ctx, st, names)
	if err != nil {
		return 0, 0, err
	}
	who := make([]string, len(d.Annotators))
	for i, a := range d.Annotators {
		who[i] = a.Name
	}
	labels, ties := agree.ConsensusLabels(d.Images, who, agree.ConsensusOptions{Threshold: iou, MinSupport: minSupport, Median: median})
	a, err := st.EnsureAnnotator(ctx, ConsensusName)
	if err != nil {
		return 0, 0, err
	}
	// The consensus is recomputed from scratch, replacing the annotator's
	// labels; labels someone else stored under the name are not ours to
	// replace.
	old, err := st.Labels(ctx, project.LabelFilter{AnnotatorID: a.ID})
	if err != nil {
		return 0, 0, err
	}
	foreign := 0
	var example project.Label
	for _, l := range old {
		if !strings.HasPrefix(l.Source, agree.ConsensusSourcePrefix) {
			if foreign == 0 {
				example = l
			}
			foreign++
		}
	}
	if foreign > 0 {
		return 0, 0, fmt.Errorf("the annotator %q holds %s that the consensus did not make (%s, source %q); "+
			"nothing was changed: rename that annotator (boxwright keeps its labels) and run consensus again: %w",
			ConsensusName, Plural(foreign, "label"), example.Origin, example.Source, project.ErrInUse)
	}
	if err := st.ReplaceAnnotatorLabels(ctx, a.ID, labels); err != nil {
		return 0, 0, fmt.Errorf("store the consensus: %w", err)
	}
	return len(labels), ties, nil
}

var errNoAnnotators = errors.New("give the annotators to compare: --annotators A,B[,C…]")
