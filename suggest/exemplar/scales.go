package exemplar

import (
	"fmt"
	"image"
	"math"
	"slices"
	"strconv"
	"strings"

	"boxwright/project"
)

// MinTemplateSide is the shortest side, in pixels, that a scaled template
// may have. Below it a template holds too few pixels for its correlation to
// single out an object: on the demo's textured water, 3-pixel templates
// matched noise at scores above 0.98 everywhere.
const MinTemplateSide = 8

// MaxScales is the most scales one search takes (steps of "lo:hi:n" or
// entries of a list); each scale is a full correlation of the image.
const MaxScales = 100

// DroppedScale is an asked scale that a search leaves out, and why.
type DroppedScale struct {
	Scale float64
	Why   string
}

// ScalePlan says which of the asked scales a search correlates.
type ScalePlan struct {
	// Asked are the scales asked for, in their order.
	Asked []float64
	// Searched are the scales searched, in the asked order.
	Searched []float64
	// Dropped are the others, in the asked order.
	Dropped []DroppedScale
	// Min and Max bound the scales that make sense for the exemplars
	// (Min rounded up, Max rounded down to three significant digits).
	Min, Max float64
}

// Range says, in words, which scales make sense.
func (p ScalePlan) Range() string {
	return fmt.Sprintf("scales from %s to %s", FormatScale(p.Min), FormatScale(p.Max))
}

// Summary says which scales were searched when some were dropped, and ""
// when every asked scale was searched.
func (p ScalePlan) Summary() string {
	if len(p.Dropped) == 0 {
		return ""
	}
	why := map[string][]string{}
	var order []string
	for _, d := range p.Dropped {
		if _, ok := why[d.Why]; !ok {
			order = append(order, d.Why)
		}
		why[d.Why] = append(why[d.Why], FormatScale(d.Scale))
	}
	var parts []string
	for _, w := range order {
		parts = append(parts, fmt.Sprintf("%s (%s)", listScales(why[w]), w))
	}
	return fmt.Sprintf("searched %d of %d scales: %s; left out %s; %s make sense here",
		len(p.Searched), len(p.Asked), listScales(fmtScales(p.Searched)), strings.Join(parts, ", "), p.Range())
}

// FormatScale writes a scale with up to six significant digits, enough to
// tell apart the steps of any "lo:hi:steps" a person types.
func FormatScale(s float64) string { return strconv.FormatFloat(s, 'g', 6, 64) }

func fmtScales(ss []float64) []string {
	out := make([]string, len(ss))
	for i, s := range ss {
		out[i] = FormatScale(s)
	}
	return out
}

// listScales joins scales, shortening a long list to its ends.
func listScales(ss []string) string {
	if len(ss) > 6 {
		return fmt.Sprintf("%s, %s, %s … %s, %s (%d scales)", ss[0], ss[1], ss[2], ss[len(ss)-2], ss[len(ss)-1], len(ss))
	}
	return strings.Join(ss, ", ")
}

// roundSig rounds x to three significant digits, up or down.
func roundSig(x float64, up bool) float64 {
	if x <= 0 || math.IsInf(x, 0) || math.IsNaN(x) {
		return x
	}
	p := math.Pow(10, 2-math.Floor(math.Log10(x)))
	if up {
		return math.Ceil(x*p-1e-9) / p
	}
	return math.Floor(x*p+1e-9) / p
}

// inward moves a bound of the scales, rounded to three significant
// digits, by steps in its third digit until a template of a crop of size c
// at that scale fits (upward for the lower bound, downward for the upper).
func inward(s float64, c, largest image.Point, rotations, up bool) float64 {
	for range 10 {
		if s <= 0 || templateFits(templateSize(c, s), largest, rotations) == "" {
			return s
		}
		step := math.Pow(10, math.Floor(math.Log10(s))-2)
		if up {
			s = roundSig(s+step, true)
		} else {
			s = roundSig(s-step, false)
		}
	}
	return s
}

// exemplarSize is the size, in pixels, of the crop newTemplateSet cuts for
// box b from an image of size img: b rounded to whole pixels and clipped to
// the image.
func exemplarSize(b project.Box, img image.Point) image.Point {
	r := image.Rect(int(math.Round(b.X0)), int(math.Round(b.Y0)), int(math.Round(b.X1)), int(math.Round(b.Y1))).Intersect(image.Rect(0, 0, img.X, img.Y))
	return r.Size()
}

// templateSize is the size of a crop of size c scaled by s.
func templateSize(c image.Point, s float64) image.Point {
	return image.Pt(int(math.Round(float64(c.X)*s)), int(math.Round(float64(c.Y)*s)))
}

// templateFits says whether a template of size t makes sense in images of
// at most size largest: both sides at least MinTemplateSide and, turned or
// not, inside the image. It returns "" or why not.
func templateFits(t, largest image.Point, rotations bool) string {
	if t.X < MinTemplateSide || t.Y < MinTemplateSide {
		return fmt.Sprintf("template under %d px on a side", MinTemplateSide)
	}
	if t.X <= largest.X && t.Y <= largest.Y || rotations && t.Y <= largest.X && t.X <= largest.Y {
		return ""
	}
	return fmt.Sprintf("template larger than the %d×%d image", largest.X, largest.Y)
}

// PlanScales decides which of opt.Scales (DefaultScales when nil) a search
// of the exemplars, boxes on an image of size exemplarImage, correlates in
// images of at most size largest: a scale is searched when at least one
// exemplar's template at that scale has both sides at least
// MinTemplateSide pixels and fits in the image; a scale whose templates
// have the same sizes as those of a scale before it adds nothing and is
// dropped too. It returns an error, stating the scales that make sense,
// when no scale is left or no scale can make sense.
func PlanScales(opt Options, exemplars []project.Box, exemplarImage, largest image.Point) (ScalePlan, error) {
	scales := opt.Scales
	if scales == nil {
		scales = DefaultScales()
	}
	largest = image.Pt(max(largest.X, exemplarImage.X), max(largest.Y, exemplarImage.Y))
	plan := ScalePlan{Asked: scales, Min: math.Inf(1)}
	var crops []image.Point
	for _, b := range exemplars {
		c := exemplarSize(b, exemplarImage)
		if c.X <= 0 || c.Y <= 0 {
			continue // newTemplateSet refuses it with its own message
		}
		crops = append(crops, c)
		// The scale at which the shorter side rounds to MinTemplateSide,
		// and the one at which the template, turned or not, fills the
		// image; rounded to three digits, inward.
		short := float64(min(c.X, c.Y))
		lo := inward(roundSig((MinTemplateSide-0.5)/short, true), c, largest, opt.Rotations, true)
		hi := min((float64(largest.X)+0.5)/float64(c.X), (float64(largest.Y)+0.5)/float64(c.Y))
		if opt.Rotations {
			hi = max(hi, min((float64(largest.X)+0.5)/float64(c.Y), (float64(largest.Y)+0.5)/float64(c.X)))
		}
		hi = inward(roundSig(hi, false), c, largest, opt.Rotations, false)
		if lo <= hi {
			plan.Min, plan.Max = min(plan.Min, lo), max(plan.Max, hi)
		}
	}
	if len(crops) == 0 {
		return plan, fmt.Errorf("exemplar search: no exemplar has pixels inside the %d×%d image", exemplarImage.X, exemplarImage.Y)
	}
	if plan.Min > plan.Max {
		plan.Min, plan.Max = 0, 0
		return plan, fmt.Errorf("exemplar search: no scale makes sense: at %d px on its shorter side the example no longer fits in the %d×%d image",
			MinTemplateSide, largest.X, largest.Y)
	}
	seen := map[string]bool{}
	for _, s := range scales {
		if !(s > 0) || math.IsInf(s, 0) {
			return plan, fmt.Errorf("exemplar search: scale %g is not a positive number; %s make sense here", s, plan.Range())
		}
		var key strings.Builder // the template sizes, to find scales that add nothing
		var why []string
		usable := false
		for _, c := range crops {
			t := templateSize(c, s)
			if w := templateFits(t, largest, opt.Rotations); w != "" {
				if !slices.Contains(why, w) {
					why = append(why, w)
				}
				key.WriteString("- ")
				continue
			}
			usable = true
			fmt.Fprintf(&key, "%d×%d ", t.X, t.Y)
		}
		if !usable {
			plan.Dropped = append(plan.Dropped, DroppedScale{s, strings.Join(why, " or ")})
			continue
		}
		if seen[key.String()] {
			plan.Dropped = append(plan.Dropped, DroppedScale{s, "same template size as a scale before it"})
			continue
		}
		seen[key.String()] = true
		plan.Searched = append(plan.Searched, s)
	}
	if len(plan.Searched) == 0 {
		return plan, fmt.Errorf("exemplar search: no scale asked makes sense (%s); %s make sense here: a template must be at least %d px on a side and fit in the %d×%d image",
			plan.Dropped[0].Why, plan.Range(), MinTemplateSide, largest.X, largest.Y)
	}
	return plan, nil
}
