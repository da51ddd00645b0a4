package report

import (
	"bytes"
	"encoding/base64"
	"encoding/csv"
	"errors"
	"fmt"
	"html/template"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// ValidationDir is where the report looks, inside the fit folder, for the
// output of 'spillway validate --fit DIR --out DIR/validation'.
const ValidationDir = "validation"

// validationView is the report's validation section.
type validationView struct {
	// Intro names the checks that ran, in plain words, and only those.
	Intro   string
	Verdict []verdictLine
	Src     template.URL
	Rows    []validationRow
}

// verdictLine is a line of the validation verdict: a check's verdict
// (Head) or a detail under it (indented in verdict.txt).
type verdictLine struct {
	Text string
	Head bool
}

type validationRow struct {
	Check, Effect, Channel, Metric, Value string
}

// headlineMetrics are the validation.csv metrics the report tabulates; the
// rest stay in the file.
var headlineMetrics = map[string]bool{"coverage_90": true, "coverage_50": true, "mape": true, "crps": true,
	"coverage_90_forecast": true, "max_shift_sd": true}

// loadValidation reads dir/validation (verdict.txt, validation.csv and
// validation.png) when it exists; a fit folder without one gives nil.
func loadValidation(dir string) (*validationView, error) {
	base := filepath.Join(dir, ValidationDir)
	verdict, err := os.ReadFile(filepath.Join(base, "verdict.txt"))
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	v := &validationView{}
	var ran []string
	for _, l := range strings.Split(string(verdict), "\n") {
		if t := strings.TrimSpace(l); t != "" {
			v.Verdict = append(v.Verdict, verdictLine{Text: t, Head: t == l})
			check, head, _ := strings.Cut(t, ": ")
			if t == l && !strings.HasPrefix(head, "not run") {
				if words, ok := checkWords[check]; ok {
					ran = append(ran, words)
				} else {
					ran = append(ran, check)
				}
			}
		}
	}
	v.Intro = joinWords(ran)
	if png, err := os.ReadFile(filepath.Join(base, "validation.png")); err == nil {
		v.Src = template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(png))
	}
	path := filepath.Join(base, "validation.csv")
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	rows, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if len(rows) == 0 || strings.Join(rows[0], ",") != "check,effect,channel,metric,value" {
		return nil, fmt.Errorf("%s: expected the header check,effect,channel,metric,value", path)
	}
	for i, r := range rows[1:] {
		if !headlineMetrics[r[3]] || strings.HasSuffix(r[1], "_quarterly") {
			continue
		}
		x, err := strconv.ParseFloat(r[4], 64)
		if err != nil {
			return nil, fmt.Errorf("%s:%d:5: %q is not a number", path, i+2, r[4])
		}
		val := strconv.FormatFloat(x, 'f', 3, 64)
		if strings.HasPrefix(r[3], "coverage") {
			val = strconv.FormatFloat(100*x, 'f', 0, 64) + "%"
		}
		v.Rows = append(v.Rows, validationRow{r[0], strings.ReplaceAll(r[1], "_", " "), r[2], strings.ReplaceAll(r[3], "_", " "), val})
	}
	return v, nil
}

// checkWords say what each check of verdict.txt did, for the section's
// introduction.
var checkWords = map[string]string{
	"recovery":  "recovery of known truth on data simulated like these",
	"holdout":   "forecasts of weeks the model did not see, against a seasonal rule and the same model without media",
	"stability": "stability when a quarter is left out or the seed changes",
	"placebo":   "placebo refits with each channel's spend moved to weeks where it did not happen",
}

// joinWords joins "a", "a and b", "a, b and c"; none gives "no check ran".
func joinWords(w []string) string {
	switch len(w) {
	case 0:
		return "no check ran"
	case 1:
		return w[0]
	}
	return strings.Join(w[:len(w)-1], ", ") + " and " + w[len(w)-1]
}
