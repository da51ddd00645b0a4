package validate

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"strings"
)

// The files of a validation folder.
const (
	ManifestFile = "manifest.json"
	JobsFile     = "jobs.csv"
	TableFile    = "validation.csv"
	ChartFile    = "validation.png"
	VerdictFile  = "verdict.txt"
	// RegionTableFile is validation.csv region by region, written for a
	// region panel only (validation.csv then holds the sums over regions).
	RegionTableFile = "validation_by_region.csv"
)

// tableHeader is the header of validation.csv.
var tableHeader = []string{"check", "effect", "channel", "metric", "value"}

// ShardFiles renders the files of a shard's folder: the manifest and the
// raw per-job records.
func ShardFiles(res *Results) (map[string][]byte, error) {
	var m, j bytes.Buffer
	if err := res.WriteManifest(&m); err != nil {
		return nil, err
	}
	if err := res.WriteJobs(&j); err != nil {
		return nil, err
	}
	return map[string][]byte{ManifestFile: m.Bytes(), JobsFile: j.Bytes()}, nil
}

// Files renders the folder of a complete sweep: manifest.json, jobs.csv,
// validation.csv and verdict.txt (and validation_by_region.csv for a
// region panel); validation.png (ChartFile) is drawn from
// the returned Report by spillway/plots/validation. To make a whole run and
// a merge of shards produce the same bytes, the records are first written
// as jobs.csv and read back, and everything is aggregated from what was
// read.
func Files(res *Results) (map[string][]byte, *Report, error) {
	files, err := ShardFiles(res)
	if err != nil {
		return nil, nil, err
	}
	back, err := ReadResults(bytes.NewReader(files[ManifestFile]), bytes.NewReader(files[JobsFile]), "sweep")
	if err != nil {
		return nil, nil, err
	}
	rep, err := Aggregate(back)
	if err != nil {
		return nil, nil, err
	}
	files[TableFile], err = rep.CSV()
	if err != nil {
		return nil, nil, err
	}
	files[VerdictFile] = []byte(rep.Text())
	if len(rep.Regions) > 0 {
		if files[RegionTableFile], err = rep.RegionCSV(); err != nil {
			return nil, nil, err
		}
	}
	return files, rep, nil
}

// CSV renders validation.csv: the columns check,effect,channel,metric,value,
// values with six significant digits and NA where there is none.
func (rep *Report) CSV() ([]byte, error) {
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	if err := w.Write(tableHeader); err != nil {
		return nil, err
	}
	for _, r := range rep.Rows {
		if err := w.Write(tableRow(r)); err != nil {
			return nil, err
		}
	}
	w.Flush()
	return b.Bytes(), w.Error()
}

// Text renders verdict.txt: one paragraph per check, the headline first.
func (rep *Report) Text() string {
	var b strings.Builder
	for _, v := range rep.Verdicts {
		b.WriteString(v.Check + ": " + v.Headline + "\n")
		for _, d := range v.Details {
			b.WriteString("  " + d + "\n")
		}
	}
	return b.String()
}

// Title sums the verdicts up in one line, for the chart: each check's
// finding in a few words ("recovery: no claim; holdout: media do not
// measurably improve the demand forecast (+2 more)"); verdict.txt has
// them in full.
func (rep *Report) Title() string {
	var parts []string
	for _, v := range rep.Verdicts {
		h := v.Headline
		if strings.HasPrefix(h, "not run") {
			continue
		}
		clauses := strings.Split(h, "; ")
		first := clauses[0]
		if short, _, ok := strings.Cut(first, ": "); ok {
			first = short
		}
		if len(clauses) > 1 {
			first += fmt.Sprintf(" (+%d more)", len(clauses)-1)
		}
		parts = append(parts, v.Check+": "+first)
	}
	if len(parts) == 0 {
		return "Validation"
	}
	s := strings.Join(parts, "; ")
	return strings.ToUpper(s[:1]) + s[1:]
}
