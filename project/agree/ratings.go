package agree

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
)

// InputError is a problem at one place of a table of counts or ratings as
// it was read (a CSV file, say). Line counts from 1 and includes a header
// row; Column counts from 1; Rater names the rater's column. Zero fields
// are not known.
type InputError struct {
	Line, Column int
	Rater        string
	Msg          string
}

func (e *InputError) Error() string {
	switch {
	case e.Line > 0 && e.Column > 0:
		return fmt.Sprintf("line %d, column %d: %s", e.Line, e.Column, e.Msg)
	case e.Line > 0 && e.Rater != "":
		return fmt.Sprintf("line %d, rater %q: %s", e.Line, e.Rater, e.Msg)
	case e.Line > 0:
		return fmt.Sprintf("line %d: %s", e.Line, e.Msg)
	}
	return e.Msg
}

func isNumber(s string) bool {
	_, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	return err == nil
}

// ParseMatrix reads a square matrix of numbers from table rows (what a CSV
// reader returns), guessing an optional header row and an optional first
// column of names: a row or column with any cell that is not a number
// holds names. The names are those of the rows when there is a name
// column, else those of the header, else 1…k. what names the matrix in
// messages ("table of counts", "weights").
func ParseMatrix(rows [][]string, what string) ([][]float64, []string, error) {
	if len(rows) == 0 {
		return nil, nil, &InputError{Msg: "the file is empty"}
	}
	header := false
	for _, c := range rows[0] {
		if strings.TrimSpace(c) != "" && !isNumber(c) {
			header = true
		}
	}
	var names []string
	if header {
		names = rows[0]
		rows = rows[1:]
	}
	nameCol := false
	for _, r := range rows {
		if len(r) > 0 && !isNumber(r[0]) {
			nameCol = true
		}
	}
	if header && len(names) > 0 && (nameCol || strings.TrimSpace(names[0]) == "") {
		names = names[1:]
	}
	var m [][]float64
	var rowNames []string
	for i, r := range rows {
		line := i + 1 + b2i(header)
		if nameCol {
			rowNames = append(rowNames, strings.TrimSpace(r[0]))
			r = r[1:]
		}
		var vals []float64
		for j, c := range r {
			v, err := strconv.ParseFloat(strings.TrimSpace(c), 64)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, nil, &InputError{Line: line, Column: j + 1 + b2i(nameCol), Msg: fmt.Sprintf("%q is not a number (%s)", c, what)}
			}
			vals = append(vals, v)
		}
		m = append(m, vals)
	}
	k := len(m)
	for i, r := range m {
		if len(r) != k {
			return nil, nil, &InputError{Msg: fmt.Sprintf("the %s must be square: %d rows but row %d has %d values", what, k, i+1, len(r))}
		}
	}
	if k == 0 {
		return nil, nil, &InputError{Msg: "no rows of numbers"}
	}
	switch {
	case rowNames != nil:
		names = rowNames // rater A's categories name the rows
	case len(names) != k:
		names = nil
	}
	if names == nil {
		for i := 1; i <= k; i++ {
			names = append(names, strconv.Itoa(i))
		}
	}
	return m, names, nil
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
}

// ParseRatings reads ratings from table rows (what a CSV reader returns):
// the first row names the raters, each further row is a unit. Cells are
// trimmed; short rows are missing ratings.
func ParseRatings(rows [][]string) (Ratings, error) {
	if len(rows) == 0 {
		return Ratings{}, &InputError{Msg: "the file is empty"}
	}
	r := Ratings{Raters: rows[0]}
	if len(r.Raters) < 2 {
		return r, &InputError{Line: 1, Msg: "the header must name at least two raters"}
	}
	for i, row := range rows[1:] {
		if len(row) > len(r.Raters) {
			return r, &InputError{Line: i + 2, Msg: fmt.Sprintf("%d values for %d raters", len(row), len(r.Raters))}
		}
		cells := make([]string, len(r.Raters))
		for j := range row {
			cells[j] = strings.TrimSpace(row[j])
		}
		r.Units = append(r.Units, cells)
	}
	return r, nil
}

// Categories are the values seen, sorted as numbers when every one is a
// number and as text otherwise.
func (r Ratings) Categories() []string {
	seen := map[string]bool{}
	numeric := true
	for _, u := range r.Units {
		for _, c := range u {
			if c != "" && !seen[c] {
				seen[c] = true
				numeric = numeric && isNumber(c)
			}
		}
	}
	var cats []string
	for c := range seen {
		cats = append(cats, c)
	}
	sort.Slice(cats, func(i, j int) bool {
		if numeric {
			a, _ := strconv.ParseFloat(cats[i], 64)
			b, _ := strconv.ParseFloat(cats[j], 64)
			return a < b
		}
		return cats[i] < cats[j]
	})
	return cats
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

// CompareRatings computes Krippendorff's alpha and percent agreement of
// any number of raters; Cohen's kappa (weighted as asked) from the k×k
// contingency table when there are two; Fleiss' kappa when every unit has
// every rater's category.
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
	weights := opt.Weights
	if weights == "" {
		weights = "none"
	}
	res := RatingsReport{Categories: cats, Raters: len(r.Raters), Units: len(r.Units), Weights: "none"}
	if len(r.Units) == 0 {
		return res, &InputError{Msg: "no units after the header"}
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
				return res, &InputError{Line: i + 2, Rater: r.Raters[j], Msg: fmt.Sprintf("%q is not one of the categories %s", c, strings.Join(cats, ","))}
			}
			if opt.Level == Interval || opt.Level == Ratio {
				v, err := strconv.ParseFloat(c, 64)
				if err != nil {
					return res, &InputError{Line: i + 2, Rater: r.Raters[j], Msg: fmt.Sprintf("%q is not a number, which the %s level needs", c, opt.Level)}
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
		res.Notes = append(res.Notes, "Krippendorff's alpha: "+err.Error())
	} else {
		res.Alpha = &a
	}
	res.Percent = PercentAgreement(units)
	if len(r.Raters) == 2 {
		t := make([][]float64, len(cats))
		for i := range t {
			t[i] = make([]float64, len(cats))
		}
		for _, u := range r.Units {
			if u[0] != "" && u[1] != "" {
				t[idx[u[0]]][idx[u[1]]]++
			}
		}
		var w [][]float64
		if weights != "none" {
			if w, err = DisagreementWeights(weights, len(cats)); err != nil {
				return res, err
			}
		}
		res.Weights = weights
		if k, err := TableKappa(t, w); err != nil {
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
