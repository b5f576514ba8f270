package agree

import (
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"
)

// InputError is a problem at one place of a file of counts, weights or
// ratings. File is the file's name as given; Line counts from 1 and
// includes a header row; Column counts cells from 1; Rater names the
// rater's column. Zero fields are not known.
type InputError struct {
	File         string
	Line, Column int
	Rater        string
	Msg          string
}

func (e *InputError) Error() string {
	var at string
	switch {
	case e.Line > 0 && e.Column > 0:
		at = fmt.Sprintf("line %d, column %d", e.Line, e.Column)
	case e.Line > 0 && e.Rater != "":
		at = fmt.Sprintf("line %d, rater %q", e.Line, e.Rater)
	case e.Line > 0:
		at = fmt.Sprintf("line %d", e.Line)
	}
	switch {
	case e.File != "" && at != "":
		return e.File + ", " + at + ": " + e.Msg
	case e.File != "":
		return e.File + ": " + e.Msg
	case at != "":
		return at + ": " + e.Msg
	}
	return e.Msg
}

// TableKappa is Cohen's kappa of a k×k table of counts, weighted when
// weights is not nil.
func TableKappa(table, weights [][]float64) (Kappa, error) {
	if weights == nil {
		return CohenKappa(table)
	}
	return WeightedKappa(table, weights)
}

// Ratings are the categories that raters gave units: a header of rater
// names and one row per unit with one cell per rater, "" where a rater
// gave none.
type Ratings struct {
	Raters []string
	Units  [][]string
	// Lines holds the line of the file each unit is on; nil when unit i
	// is on line i+2.
	Lines []int
	// Notes are remarks about how the file was read.
	Notes []string
}

// line is the line of the file unit i is on.
func (r Ratings) line(i int) int {
	if i < len(r.Lines) {
		return r.Lines[i]
	}
	return i + 2
}

// ReadRatings reads a file of ratings (see records.go for the text
// layout; file names it in errors): a header line of rater names, then
// one line per unit with one cell per rater, an empty cell where a rater
// gave none. Lines may stop short of the last raters; cells after the
// last rater must be empty. When the first cell of the header is empty,
// the first column names the units and is not a rater. Rater names must
// be present and distinct. Every error is an *InputError naming the
// file and, where one is to blame, the line and column.
func ReadRatings(rd io.Reader, file string) (Ratings, error) {
	rr := newRecordReader(rd, file)
	head, hline, err := rr.next()
	if errors.Is(err, io.EOF) {
		return Ratings{}, rr.fail(0, 0, "the file is empty; want a header line of rater names, then one line per unit")
	}
	if err != nil {
		return Ratings{}, err
	}
	off := 0
	if len(head) > 1 && head[0] == "" {
		off = 1 // a column of unit names
	}
	raters := head[off:]
	for len(raters) > 0 && raters[len(raters)-1] == "" {
		raters = raters[:len(raters)-1]
	}
	if len(raters) < 2 {
		return Ratings{}, rr.fail(hline, 0, "the header must name at least two raters, one column each")
	}
	seen := map[string]int{}
	numeric := true
	for j, name := range raters {
		if name == "" {
			return Ratings{}, rr.fail(hline, j+1+off, "the rater has no name")
		}
		if k, dup := seen[name]; dup {
			return Ratings{}, rr.fail(hline, j+1+off, "the rater %q is named twice (also column %d)", name, k+1+off)
		}
		seen[name] = j
		numeric = numeric && isNumber(name)
	}
	res := Ratings{Raters: raters}
	var short []int // lines with fewer cells than raters
	if numeric {
		res.Notes = append(res.Notes, fmt.Sprintf("the header (line %d: %s) holds only numbers; it is read as the raters' names. If it is a unit, put a line of rater names above it", hline, strings.Join(raters, ", ")))
	}
	for {
		cells, line, err := rr.next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return Ratings{}, err
		}
		if off > 0 {
			cells = cells[1:]
		}
		for j := len(raters); j < len(cells); j++ {
			if cells[j] != "" {
				return Ratings{}, rr.fail(line, j+1+off, "%q is beyond the %d raters the header names (line %d); cells after the last rater must be empty", cells[j], len(raters), hline)
			}
		}
		if len(cells) < len(raters) {
			short = append(short, line)
		}
		unit := make([]string, len(raters))
		copy(unit, cells)
		res.Units = append(res.Units, unit)
		res.Lines = append(res.Lines, line)
	}
	if len(res.Units) == 0 {
		return Ratings{}, rr.fail(hline, 0, "no units after the header: want one line per unit")
	}
	// A line with fewer cells than raters (a file cut short, a cell lost)
	// is read with the missing cells as missing ratings, and said so.
	if len(short) > 0 {
		lines := make([]string, len(short))
		for i, l := range short {
			lines[i] = strconv.Itoa(l)
		}
		if len(lines) > 5 {
			lines = append(lines[:5], "…")
		}
		what := "line " + lines[0] + " holds"
		if len(short) > 1 {
			what = fmt.Sprintf("%d lines (%s) hold", len(short), strings.Join(lines, ", "))
		}
		res.Notes = append(res.Notes, fmt.Sprintf("%s fewer cells than the %d raters; the missing cells are read as missing ratings", what, len(raters)))
	}
	return res, nil
}

// Categories are the values seen, sorted as numbers when every one is a
// decimal number (ties, such as 1 and 1.0, in text order) and as text
// otherwise.
func (r Ratings) Categories() []string {
	seen := map[string]bool{}
	var cats []string
	for _, u := range r.Units {
		for _, c := range u {
			if c != "" && !seen[c] {
				seen[c] = true
				cats = append(cats, c)
			}
		}
	}
	sortCategories(cats)
	return cats
}

// sortCategories sorts as numbers when all are decimal numbers, else as
// text; it reports whether they were numbers.
func sortCategories(cats []string) bool {
	numeric := true
	for _, c := range cats {
		numeric = numeric && isNumber(c)
	}
	sort.Slice(cats, func(i, j int) bool {
		if numeric {
			a, _ := strconv.ParseFloat(cats[i], 64)
			b, _ := strconv.ParseFloat(cats[j], 64)
			if a != b {
				return a < b
			}
		}
		return cats[i] < cats[j]
	})
	return numeric
}

// RatingsOptions says how ratings are compared.
type RatingsOptions struct {
	// Categories in order; nil takes Ratings.Categories.
	Categories []string
	// Level is the level of measurement of Krippendorff's alpha.
	Level Level
	// Weights are Cohen's kappa's disagreement weights for two raters:
	// "none" (or ""), "linear" or "quadratic".
	Weights string
}

// RatingsReport is every coefficient that fits the ratings. A coefficient
// that does not apply is nil, with the reason in Notes.
type RatingsReport struct {
	Categories    []string
	Units, Raters int
	Weights       string // as applied: none, linear or quadratic
	Cohen         *Kappa // two raters only
	Fleiss        *Fleiss
	Alpha         *Alpha
	Percent       float64 // percent agreement
	Notes         []string
}

// ErrDuplicateCategory is returned when RatingsOptions names a category
// twice.
var ErrDuplicateCategory = errors.New("a category is named twice")

// ErrCategoryOrder is returned when the comparison asked for needs the
// categories in order (ordinal alpha; linear or quadratic weights) but
// they are not all numbers and RatingsOptions does not give their order.
var ErrCategoryOrder = errors.New("the categories are not all numbers, so their order must be given")

// CompareRatings computes Krippendorff's alpha and percent agreement of
// any number of raters; Cohen's kappa (weighted as asked) from the k×k
// contingency table when there are two; Fleiss' kappa when every unit has
// every rater's category. At most MaxCells categories are compared. At the
// interval and ratio levels every rating must be a finite decimal number
// (not negative at the ratio level); errors name the unit's line and the
// rater.
func CompareRatings(r Ratings, opt RatingsOptions) (RatingsReport, error) {
	cats := opt.Categories
	if cats == nil {
		cats = r.Categories()
	}
	idx := map[string]int{}
	for i, c := range cats {
		if _, dup := idx[c]; dup {
			return RatingsReport{}, fmt.Errorf("%q: %w", c, ErrDuplicateCategory)
		}
		idx[c] = i
	}
	if len(cats) > MaxCells {
		// The tables built from them are k×k (Cohen, alpha) and units×k
		// (Fleiss).
		return RatingsReport{}, fmt.Errorf("the ratings hold %d distinct categories (values); at most %d can be compared", len(cats), MaxCells)
	}
	weights := opt.Weights
	if weights == "" {
		weights = "none"
	}
	res := RatingsReport{Categories: cats, Raters: len(r.Raters), Units: len(r.Units), Weights: "none"}
	res.Notes = append(res.Notes, r.Notes...)
	if len(r.Units) == 0 {
		return res, &InputError{Msg: "no units after the header"}
	}
	if opt.Categories == nil && (opt.Level == Ordinal || len(r.Raters) == 2 && weights != "none") {
		if numeric := sortCategories(append([]string(nil), cats...)); !numeric {
			return res, fmt.Errorf("%w: %s", ErrCategoryOrder, strings.Join(cats, ", "))
		}
	}
	// Values for alpha: category positions for nominal and ordinal, the
	// numbers themselves for interval and ratio.
	units := make([][]float64, len(r.Units))
	complete := true
	for i, u := range r.Units {
		units[i] = make([]float64, len(r.Raters))
		for j, c := range u {
			if c == "" {
				units[i][j] = math.NaN()
				complete = false
				continue
			}
			p, ok := idx[c]
			if !ok {
				return res, &InputError{Line: r.line(i), Rater: r.Raters[j], Msg: fmt.Sprintf("%q is not one of the categories %s", c, strings.Join(cats, ","))}
			}
			if opt.Level == Interval || opt.Level == Ratio {
				v, msg := parseDecimal(c)
				switch {
				case msg != "":
					return res, &InputError{Line: r.line(i), Rater: r.Raters[j], Msg: fmt.Sprintf("%s, which the %s level needs as a finite number (leave the cell empty for a missing rating)", msg, opt.Level)}
				case opt.Level == Ratio && v < 0:
					return res, &InputError{Line: r.line(i), Rater: r.Raters[j], Msg: fmt.Sprintf("%s is negative, which the ratio level does not allow", c)}
				}
				units[i][j] = v
			} else {
				units[i][j] = float64(p)
			}
		}
	}
	// For ordinal alpha the values must order as the categories do.
	a, err := KrippendorffAlpha(units, opt.Level)
	if err != nil {
		return res, fmt.Errorf("Krippendorff's alpha: %w", err)
	}
	res.Alpha = &a
	res.Percent = PercentAgreement(units)
	if len(r.Raters) == 2 {
		t := make([][]float64, len(cats))
		for i := range t {
			t[i] = make([]float64, len(cats))
		}
		both := 0
		for _, u := range r.Units {
			if u[0] != "" && u[1] != "" {
				t[idx[u[0]]][idx[u[1]]]++
				both++
			}
		}
		var w [][]float64
		if weights != "none" {
			if w, err = DisagreementWeights(weights, len(cats)); err != nil {
				return res, err
			}
		}
		res.Weights = weights
		if both == 0 {
			res.Notes = append(res.Notes, "Cohen's kappa: no unit has a rating from both raters")
		} else if k, err := TableKappa(t, w); err != nil {
			res.Notes = append(res.Notes, "Cohen's kappa: "+err.Error())
		} else {
			res.Cohen = &k
		}
	} else if weights != "none" {
		res.Notes = append(res.Notes, "weights apply to Cohen's kappa, which needs exactly two raters")
	}
	if complete {
		counts := make([][]float64, len(r.Units))
		for i, u := range r.Units {
			counts[i] = make([]float64, len(cats))
			for _, c := range u {
				counts[i][idx[c]]++
			}
		}
		if f, err := FleissKappa(counts); err == nil {
			res.Fleiss = &f
		} else {
			res.Notes = append(res.Notes, "Fleiss' kappa: "+err.Error())
		}
	} else {
		res.Notes = append(res.Notes, "Fleiss' kappa needs every unit rated by every rater; with missing ratings only Krippendorff's alpha is given")
	}
	return res, nil
}
