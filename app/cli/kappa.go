package cli

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"slices"
	"strings"

	"boxwright/app/ops"
	"boxwright/project/agree"
	"boxwright/project/formats"
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
	levelSet := false
	fs.Visit(func(f *flag.Flag) { levelSet = levelSet || f.Name == "level" })
	var res kappaResult
	var err error
	if *table != "" {
		if *cats != "" {
			return usageError("--categories goes with --ratings; a table's categories are its rows")
		}
		if levelSet {
			return usageError("--level goes with --ratings (Krippendorff's alpha); a table gives Cohen's kappa")
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
		out["n"], out["po"], out["pe"], out["kappa"] = ops.Num(k.N), ops.Num(k.Po), ops.Num(k.Pe), ops.Num(k.Kappa)
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
		fmt.Fprintf(w, "%s, %s, categories %s\n", ops.Plural(r.units, "unit"), ops.Plural(r.raters, "rater"), strings.Join(r.categories, ", "))
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

// readTableFile reads a table of counts (agree.ReadTable) from a regular file.
func readTableFile(path string) (agree.Matrix, error) {
	f, err := formats.OpenFile(path)
	if err != nil {
		return agree.Matrix{}, err
	}
	defer f.Close()
	return agree.ReadTable(f, path)
}

// readWeightsFile reads a table of disagreement weights (agree.ReadWeights)
// from a regular file; a --weights value that is no file and no kind of
// weights is a usage error.
func readWeightsFile(path string) (agree.Matrix, error) {
	if _, err := os.Stat(path); errors.Is(err, fs.ErrNotExist) {
		return agree.Matrix{}, usageError(fmt.Sprintf("--weights %q: use none, linear, quadratic or a CSV file of weights (there is no file %s)", path, path))
	}
	f, err := formats.OpenFile(path)
	if err != nil {
		return agree.Matrix{}, err
	}
	defer f.Close()
	return agree.ReadWeights(f, path)
}

func kappaOfTable(path, weightSpec string) (kappaResult, error) {
	t, err := readTableFile(path)
	if err != nil {
		return kappaResult{}, err
	}
	res := kappaResult{categories: t.Names}
	k := len(t.Values)
	var w [][]float64
	if weightSpec != "" && weightSpec != "none" && weightSpec != "linear" && weightSpec != "quadratic" {
		wm, err := readWeightsFile(weightSpec)
		if err != nil {
			return res, err
		}
		if len(wm.Values) != k {
			return res, fmt.Errorf("%s: %d×%d weights for a %d×%d table", weightSpec, len(wm.Values), len(wm.Values), k, k)
		}
		if wm.Named && t.Named && !slices.Equal(wm.Names, t.Names) {
			return res, fmt.Errorf("%s names the categories %s, but %s names them %s: the weights must be in the table's order", weightSpec, strings.Join(wm.Names, ", "), path, strings.Join(t.Names, ", "))
		}
		w = wm.Values
		res.weights = "custom (" + weightSpec + ")"
	} else if w, res.weights, err = weightsFor(weightSpec, k); err != nil {
		return res, usageError(err.Error())
	}
	kap, err := agree.TableKappa(t.Values, w)
	if err != nil {
		return res, fmt.Errorf("%s: %w", path, err)
	}
	res.cohen = &kap
	return res, nil
}

// kappaOfRatings compares the raters of a CSV file of ratings.
func kappaOfRatings(path, weightSpec, levelName, catList string) (kappaResult, error) {
	level, err := agree.ParseLevel(levelName)
	if err != nil {
		return kappaResult{}, usageError(err.Error())
	}
	if _, _, err := weightsFor(weightSpec, 2); err != nil {
		return kappaResult{}, usageError(fmt.Sprintf("--weights %q: with --ratings use none, linear or quadratic (a CSV file of weights goes with --table)", weightSpec))
	}
	opt := agree.RatingsOptions{Level: level, Weights: weightSpec}
	if catList != "" {
		for i, c := range strings.Split(catList, ",") {
			if c = strings.TrimSpace(c); c == "" {
				return kappaResult{}, usageError(fmt.Sprintf("--categories %q: entry %d is empty", catList, i+1))
			}
			opt.Categories = append(opt.Categories, c)
		}
	}
	f, err := formats.OpenFile(path)
	if err != nil {
		return kappaResult{}, err
	}
	defer f.Close()
	r, err := agree.ReadRatings(f, path)
	if err != nil {
		return kappaResult{}, err
	}
	rep, err := agree.CompareRatings(r, opt)
	switch {
	case errors.Is(err, agree.ErrDuplicateCategory):
		return kappaResult{}, usageError(fmt.Sprintf("--categories names %s twice", strings.TrimSuffix(err.Error(), ": "+agree.ErrDuplicateCategory.Error())))
	case errors.Is(err, agree.ErrCategoryOrder):
		what := "--level ordinal"
		if level != agree.Ordinal {
			what = "--weights " + weightSpec
		}
		return kappaResult{}, usageError(fmt.Sprintf("%s needs the categories in order, but %s holds %s, which are not all numbers: give their order with --categories, such as --categories %s",
			what, path, strings.Join(rep.Categories, ", "), strings.Join(rep.Categories, ",")))
	}
	res := kappaResult{categories: rep.Categories, raters: rep.Raters, units: rep.Units, weights: rep.Weights,
		cohen: rep.Cohen, fleiss: rep.Fleiss, alpha: rep.Alpha, percent: rep.Percent, notes: rep.Notes}
	var ie *agree.InputError
	if errors.As(err, &ie) && ie.File == "" {
		ie.File = path
		return res, err
	}
	if err != nil {
		return res, fmt.Errorf("%s: %w", path, err)
	}
	return res, nil
}
