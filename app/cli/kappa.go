package cli

import (
	"encoding/csv"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"

	"boxwright/app/ops"
	"boxwright/project/agree"
)

func cmdKappa(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("kappa", flag.ContinueOnError)
	table := fs.String("table", "", "k×k table of counts (CSV; rows rater A, columns rater B)")
	ratings := fs.String("ratings", "", "ratings (CSV; a header of rater names, one row per unit)")
	weights := fs.String("weights", "none", "none, linear, quadratic, or (with --table) a k×k CSV of disagreement weights")
	level := fs.String("level", "nominal", "Krippendorff's alpha level: nominal, ordinal, interval or ratio")
	cats := fs.String("categories", "", "with --ratings: the categories in order, comma-separated")
	asJSON := fs.Bool("json", false, "print JSON")
	synopsis := "kappa (--table FILE.csv [--weights none|linear|quadratic|W.csv] | --ratings FILE.csv [--level L] [--weights W] [--categories a,b,c]) [--json]"
	if _, err := parse(fs, args, 0, 0, synopsis); err != nil {
		return err
	}
	if (*table == "") == (*ratings == "") {
		return usageError("give exactly one of --table and --ratings\nusage: boxwright " + synopsis)
	}
	var res kappaResult
	var err error
	if *table != "" {
		if *cats != "" {
			return usageError("--categories goes with --ratings; a table's categories are its rows")
		}
		res, err = kappaOfTable(*table, *weights)
	} else {
		res, err = kappaOfRatings(*ratings, *weights, *level, *cats)
	}
	if err != nil {
		return err
	}
	if *asJSON {
		return writeJSON(stdout, res.json())
	}
	res.print(stdout)
	return nil
}

// kappaResult is everything "kappa" reports.
type kappaResult struct {
	categories []string
	weights    string
	cohen      *agree.Kappa
	fleiss     *agree.Fleiss
	alpha      *agree.Alpha
	percent    float64
	units      int
	raters     int
	notes      []string
}

func (r kappaResult) json() map[string]any {
	out := map[string]any{"weights": r.weights, "categories": r.categories, "units": nil, "raters": nil,
		"n": nil, "po": nil, "pe": nil, "kappa": nil, "se": nil, "ci95": nil, "se0": nil, "z": nil, "band": nil,
		"fleiss_kappa": nil, "krippendorff_alpha": nil, "percent_agreement": ops.Num(r.percent)}
	notes := append([]string(nil), r.notes...)
	if r.units > 0 {
		out["units"], out["raters"] = r.units, r.raters
	}
	if k := r.cohen; k != nil {
		out["n"], out["po"], out["pe"], out["kappa"] = k.N, ops.Num(k.Po), ops.Num(k.Pe), ops.Num(k.Kappa)
		out["se"], out["ci95"], out["se0"], out["z"] = ops.Num(k.SE), ops.Interval(k.CI95), ops.Num(k.SE0), ops.Num(k.Z)
		if !math.IsNaN(k.Kappa) {
			out["band"] = agree.Band(k.Kappa)
			out["band_source"] = agree.BandCitation + "; " + agree.BandRule
		}
		notes = append(notes, k.Notes...)
	}
	if f := r.fleiss; f != nil {
		out["fleiss_kappa"] = ops.Num(f.Kappa)
		notes = append(notes, f.Notes...)
	}
	if a := r.alpha; a != nil {
		out["krippendorff_alpha"] = ops.Num(a.Alpha)
		out["alpha_level"] = a.Level.String()
		notes = append(notes, a.Notes...)
	}
	if r.units == 0 {
		delete(out, "percent_agreement") // a table has no units to agree on
	}
	if notes == nil {
		notes = []string{}
	}
	out["notes"] = notes
	return out
}

func (r kappaResult) print(w io.Writer) {
	if r.units > 0 {
		fmt.Fprintf(w, "%d units, %d raters, categories %s\n", r.units, r.raters, strings.Join(r.categories, ", "))
	}
	if k := r.cohen; k != nil {
		kind := "unweighted"
		if r.weights != "none" {
			kind = r.weights + " weights"
		}
		fmt.Fprintf(w, "Cohen's kappa (%s): %s\n", kind, ops.FormatKappa(*k))
		fmt.Fprintf(w, "  n %g, observed agreement %.4f, chance agreement %.4f\n", k.N, k.Po, k.Pe)
		fmt.Fprintf(w, "  SE %s, 95 %% CI %s, SE under H0 %s, z %s\n", ops.F4(k.SE), ops.CI(k.CI95), ops.F4(k.SE0), ops.F4(k.Z))
	}
	if f := r.fleiss; f != nil {
		fmt.Fprintf(w, "Fleiss' kappa: %s\n", ops.F4(f.Kappa))
	}
	if a := r.alpha; a != nil {
		fmt.Fprintf(w, "Krippendorff's alpha (%s): %s\n", a.Level, ops.F4(a.Alpha))
	}
	if r.units > 0 {
		fmt.Fprintf(w, "Percent agreement: %s\n", ops.Pct(r.percent))
	}
	for _, n := range r.json()["notes"].([]string) {
		fmt.Fprintf(w, "note: %s\n", n)
	}
	if r.cohen != nil && !math.IsNaN(r.cohen.Kappa) {
		fmt.Fprintf(w, "Bands: %s. %s\n", agree.BandCitation, agree.BandRule)
	}
}

// readCSV reads a whole CSV file; rows may differ in length.
func readCSV(path string) ([][]string, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.FieldsPerRecord = -1
	r.TrimLeadingSpace = true
	rows, err := r.ReadAll()
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if len(rows) == 0 {
		return nil, fmt.Errorf("%s: the file is empty", path)
	}
	return rows, nil
}

func isNumber(s string) bool {
	_, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	return err == nil
}

// readMatrix reads a square matrix of numbers with an optional header row
// and an optional first column of names.
func readMatrix(path, what string) ([][]float64, []string, error) {
	rows, err := readCSV(path)
	if err != nil {
		return nil, nil, err
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
		line := i + 1
		if header {
			line++
		}
		if nameCol {
			rowNames = append(rowNames, strings.TrimSpace(r[0]))
			r = r[1:]
		}
		var vals []float64
		for j, c := range r {
			v, err := strconv.ParseFloat(strings.TrimSpace(c), 64)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, nil, fmt.Errorf("%s, line %d, column %d: %q is not a number (%s)", path, line, j+1+b2i(nameCol), c, what)
			}
			vals = append(vals, v)
		}
		m = append(m, vals)
	}
	k := len(m)
	for i, r := range m {
		if len(r) != k {
			return nil, nil, fmt.Errorf("%s: the %s must be square: %d rows but row %d has %d values", path, what, k, i+1, len(r))
		}
	}
	if k == 0 {
		return nil, nil, fmt.Errorf("%s: no rows of numbers", path)
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

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}

func weightsFor(spec string, k int) ([][]float64, string, error) {
	switch spec {
	case "", "none":
		return nil, "none", nil
	case "linear", "quadratic":
		w, err := agree.DisagreementWeights(spec, k)
		return w, spec, err
	}
	return nil, "", fmt.Errorf("--weights %q: use none, linear, quadratic or a CSV file of weights", spec)
}

func kappaOfTable(path, weightSpec string) (kappaResult, error) {
	t, names, err := readMatrix(path, "table of counts")
	if err != nil {
		return kappaResult{}, err
	}
	res := kappaResult{categories: names}
	var w [][]float64
	if weightSpec != "" && weightSpec != "none" && weightSpec != "linear" && weightSpec != "quadratic" {
		if w, _, err = readMatrix(weightSpec, "weights"); err != nil {
			return res, err
		}
		if len(w) != len(t) {
			return res, fmt.Errorf("%s: %d×%d weights for a %d×%d table", weightSpec, len(w), len(w), len(t), len(t))
		}
		res.weights = "custom (" + weightSpec + ")"
	} else if w, res.weights, err = weightsFor(weightSpec, len(t)); err != nil {
		return res, usageError(err.Error())
	}
	var k agree.Kappa
	if w == nil {
		k, err = agree.CohenKappa(t)
	} else {
		k, err = agree.WeightedKappa(t, w)
	}
	if err != nil {
		return res, fmt.Errorf("%s: %w", path, err)
	}
	res.cohen = &k
	return res, nil
}

func kappaOfRatings(path, weightSpec, levelName, catList string) (kappaResult, error) {
	level, err := agree.ParseLevel(levelName)
	if err != nil {
		return kappaResult{}, usageError(err.Error())
	}
	rows, err := readCSV(path)
	if err != nil {
		return kappaResult{}, err
	}
	raters := rows[0]
	if len(raters) < 2 {
		return kappaResult{}, fmt.Errorf("%s, line 1: the header must name at least two raters", path)
	}
	var data [][]string
	for i, r := range rows[1:] {
		if len(r) > len(raters) {
			return kappaResult{}, fmt.Errorf("%s, line %d: %d values for %d raters", path, i+2, len(r), len(raters))
		}
		cells := make([]string, len(raters))
		for j := range r {
			cells[j] = strings.TrimSpace(r[j])
		}
		data = append(data, cells)
	}
	// Categories: as given, or the sorted values seen.
	var cats []string
	if catList != "" {
		for _, c := range strings.Split(catList, ",") {
			cats = append(cats, strings.TrimSpace(c))
		}
	} else {
		seen := map[string]bool{}
		numeric := true
		for _, r := range data {
			for _, c := range r {
				if c != "" && !seen[c] {
					seen[c] = true
					numeric = numeric && isNumber(c)
				}
			}
		}
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
	}
	idx := map[string]int{}
	for i, c := range cats {
		if _, dup := idx[c]; dup {
			return kappaResult{}, usageError(fmt.Sprintf("--categories names %q twice", c))
		}
		idx[c] = i
	}
	res := kappaResult{categories: cats, raters: len(raters), units: len(data), weights: "none"}
	if len(data) == 0 {
		return res, fmt.Errorf("%s: no units after the header", path)
	}
	// Values for alpha: category positions for nominal and ordinal, the
	// numbers themselves for interval and ratio.
	units := make([][]float64, len(data))
	complete := true
	for i, r := range data {
		units[i] = make([]float64, len(raters))
		for j, c := range r {
			if c == "" {
				units[i][j] = math.NaN()
				complete = false
				continue
			}
			p, ok := idx[c]
			if !ok {
				return res, fmt.Errorf("%s, line %d, rater %q: %q is not one of the categories %s", path, i+2, raters[j], c, strings.Join(cats, ","))
			}
			if level == agree.Interval || level == agree.Ratio {
				v, err := strconv.ParseFloat(c, 64)
				if err != nil {
					return res, fmt.Errorf("%s, line %d, rater %q: %q is not a number, which the %s level needs", path, i+2, raters[j], c, level)
				}
				units[i][j] = v
			} else {
				units[i][j] = float64(p)
			}
		}
	}
	// For ordinal alpha the values must order as the categories do.
	a, err := agree.KrippendorffAlpha(units, level)
	if err != nil {
		res.notes = append(res.notes, "Krippendorff's alpha: "+err.Error())
	} else {
		res.alpha = &a
	}
	res.percent = agree.PercentAgreement(units)
	if len(raters) == 2 {
		t := make([][]float64, len(cats))
		for i := range t {
			t[i] = make([]float64, len(cats))
		}
		for _, r := range data {
			if r[0] != "" && r[1] != "" {
				t[idx[r[0]]][idx[r[1]]]++
			}
		}
		w, name, err := weightsFor(weightSpec, len(cats))
		if err != nil {
			return res, usageError(err.Error())
		}
		res.weights = name
		var k agree.Kappa
		if w == nil {
			k, err = agree.CohenKappa(t)
		} else {
			k, err = agree.WeightedKappa(t, w)
		}
		if err != nil {
			res.notes = append(res.notes, "Cohen's kappa: "+err.Error())
		} else {
			res.cohen = &k
		}
	} else if weightSpec != "none" && weightSpec != "" {
		res.notes = append(res.notes, "--weights applies to Cohen's kappa, which needs exactly two raters")
	}
	if complete {
		counts := make([][]float64, len(data))
		for i, r := range data {
			counts[i] = make([]float64, len(cats))
			for _, c := range r {
				counts[i][idx[c]]++
			}
		}
		if f, err := agree.FleissKappa(counts); err == nil {
			res.fleiss = &f
		} else {
			res.notes = append(res.notes, "Fleiss' kappa: "+err.Error())
		}
	} else {
		res.notes = append(res.notes, "Fleiss' kappa needs every unit rated by every rater; with missing ratings only Krippendorff's alpha is given")
	}
	return res, nil
}
