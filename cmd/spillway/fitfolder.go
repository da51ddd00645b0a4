package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"spillway/funnel/data"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/pipeline"
	"spillway/plots/fitdir"
)

// fitSpec is spec.json: everything needed to rerun a fit.
type fitSpec struct {
	Spec     data.Spec `json:"spec"`
	Demo     string    `json:"demo,omitempty"` // the scenario name when the data are the built-in demo
	Seed     uint64    `json:"seed"`
	Chains   int       `json:"chains"`
	Warmup   int       `json:"warmup"`
	Draws    int       `json:"draws"`
	Accept   float64   `json:"target_accept"`
	Linear   []string  `json:"linear,omitempty"`
	Priors   string    `json:"priors,omitempty"` // the priors file given; copied into the folder as priors.csv
	Command  string    `json:"command"`
	DataFile string    `json:"data_file"`
	Version  string    `json:"version"`
}

// choices are the model choices the spec records; the priors file is the
// copy in the fit folder dir.
func (s *fitSpec) choices(dir string) pipeline.Choices {
	c := pipeline.Choices{Linear: s.Linear}
	if s.Priors != "" {
		c.Priors = filepath.Join(dir, "priors.csv")
	}
	return c
}

// statsOf is a stage's stats.json (the schema the fit folder's reader,
// plots/fitdir, defines).
func statsOf(f *mcmc.Fit, wall float64) fitdir.Stats {
	s := fitdir.Stats{WallSeconds: wall}
	for _, c := range f.Chains {
		st := c.Stats
		s.WarmupSeconds = append(s.WarmupSeconds, st.WarmupSeconds)
		s.SamplingSeconds = append(s.SamplingSeconds, st.SamplingSeconds)
		s.GradientEvaluations = append(s.GradientEvaluations, int64(st.GradientEvaluations))
		s.Divergences = append(s.Divergences, st.Divergences)
		s.TreedepthHits = append(s.TreedepthHits, st.TreeDepthHits)
		s.StepSize = append(s.StepSize, st.StepSize)
		s.MeanLeapfrogs = append(s.MeanLeapfrogs, st.MeanLeapfrogs)
		s.EBFMI = append(s.EBFMI, st.EBFMI)
	}
	return s
}

func jsonBytes(v any) ([]byte, error) {
	b, err := json.MarshalIndent(v, "", "  ")
	return append(b, '\n'), err
}

// stageReport is one stage's summaries and verdict.
type stageReport struct {
	name    string
	summary []mcmc.Summary
	verdict mcmc.Verdict
}

// fitFiles renders the fit folder's files: spec.json, data.csv, priors.csv,
// per stage draws.csv, summary.csv and stats.json, and verdict.txt.
func fitFiles(fs *fitSpec, ds *data.Dataset, priors []byte, f *pipeline.Fitted) (map[string][]byte, []stageReport, error) {
	files := map[string][]byte{}
	var buf bytes.Buffer
	if err := data.WriteCSV(&buf, ds); err != nil {
		return nil, nil, err
	}
	files["data.csv"] = append([]byte(nil), buf.Bytes()...)
	if priors != nil {
		files["priors.csv"] = priors
	}
	b, err := jsonBytes(fs)
	if err != nil {
		return nil, nil, err
	}
	files["spec.json"] = b
	var reps []stageReport
	for k, name := range pipeline.StageNames {
		fit := f.Fits[k]
		buf.Reset()
		if err := mcmc.WriteDraws(&buf, fit); err != nil {
			return nil, nil, err
		}
		files[name+"/draws.csv"] = append([]byte(nil), buf.Bytes()...)
		sum := mcmc.Summarize(fit)
		buf.Reset()
		if err := mcmc.WriteSummary(&buf, sum); err != nil {
			return nil, nil, err
		}
		files[name+"/summary.csv"] = append([]byte(nil), buf.Bytes()...)
		if files[name+"/stats.json"], err = jsonBytes(statsOf(fit, f.Wall[k])); err != nil {
			return nil, nil, err
		}
		reps = append(reps, stageReport{name: name, summary: sum, verdict: mcmc.Judge(fit, sum)})
	}
	files["verdict.txt"] = []byte(verdictText(reps))
	return files, reps, nil
}

// verdictText is verdict.txt: "trustworthy" or "not trustworthy", then one
// reason per line prefixed with its stage.
func verdictText(reps []stageReport) string {
	var sb strings.Builder
	ok := true
	for _, r := range reps {
		ok = ok && r.verdict.Trustworthy
	}
	if ok {
		sb.WriteString("trustworthy\n")
	} else {
		sb.WriteString("not trustworthy\n")
	}
	for _, r := range reps {
		for _, why := range r.verdict.Reasons {
			fmt.Fprintf(&sb, "%s: %s\n", r.name, why)
		}
		for _, w := range r.verdict.Warnings {
			fmt.Fprintf(&sb, "%s: note: %s\n", r.name, w)
		}
	}
	return sb.String()
}

// fitFolder is a fit folder read back.
type fitFolder struct {
	dir    string
	spec   fitSpec
	data   *data.Dataset
	scaled *model.Scaled
	stages [3]*model.Stage
	fits   [3]*mcmc.Fit

	// options are the model options of the spec's choices.
	options model.Options
}

// readFitFolder loads a fit folder written by fit. Problems are bad data
// (exit status 2): the folder is the user's input to split, chart and report.
func readFitFolder(dir string) (*fitFolder, error) {
	ff := &fitFolder{dir: dir}
	b, err := os.ReadFile(filepath.Join(dir, "spec.json"))
	if err != nil {
		return nil, badData(fmt.Errorf("%s is not a fit folder (no spec.json): run 'spillway fit' first: %w", dir, err))
	}
	if err := json.Unmarshal(b, &ff.spec); err != nil {
		return nil, badData(fmt.Errorf("%s: %w", filepath.Join(dir, "spec.json"), err))
	}
	spec := ff.spec.Spec
	spec.Data = filepath.Join(dir, ff.spec.DataFile)
	ds, err := data.Load(spec.Data, spec)
	if err != nil {
		return nil, badData(err)
	}
	ff.data = ds
	ff.scaled = model.Scale(ds.National(), ds.Spec)
	if ff.options, err = ff.spec.choices(dir).Options(ff.scaled); err != nil {
		return nil, badData(err)
	}
	if ff.stages, err = pipeline.Stages(ff.scaled, ff.options); err != nil {
		return nil, err
	}
	for k, name := range pipeline.StageNames {
		p := filepath.Join(dir, name, "draws.csv")
		f, err := os.Open(p)
		if err != nil {
			return nil, badData(fmt.Errorf("fit folder %s is incomplete: %w", dir, err))
		}
		fit, err := mcmc.ReadDraws(f)
		f.Close()
		if err != nil {
			return nil, badData(fmt.Errorf("%s: %w", p, err))
		}
		want := ff.stages[k].Names()
		if strings.Join(fit.Names, ",") != strings.Join(want, ",") {
			return nil, badData(fmt.Errorf("%s: parameters %v do not match the model's %v", p, fit.Names, want))
		}
		ff.fits[k] = fit
	}
	return ff, nil
}

// rerunCommand spells out the command that reproduces a fit.
func rerunCommand(verb string, fs *fitSpec, out string) string {
	var parts []string
	add := func(flag, v string) {
		if v != "" {
			parts = append(parts, "--"+flag, shellQuote(v))
		}
	}
	parts = append(parts, "spillway", verb)
	if fs.Demo == "" {
		s := fs.Spec
		add("data", s.Data)
		add("date", s.Date)
		add("region", s.Region)
		add("population", s.Population)
		add("upper", strings.Join(s.Upper, ","))
		add("search", strings.Join(s.Search, ","))
		add("queries", s.Queries)
		add("outcome", s.Outcome)
		add("controls", strings.Join(s.Controls, ","))
	}
	if len(fs.Linear) > 0 {
		l := append([]string(nil), fs.Linear...)
		sort.Strings(l)
		add("linear", strings.Join(l, ","))
	}
	add("priors", fs.Priors)
	add("seed", strconv.FormatUint(fs.Seed, 10))
	add("chains", strconv.Itoa(fs.Chains))
	add("warmup", strconv.Itoa(fs.Warmup))
	add("draws", strconv.Itoa(fs.Draws))
	add("target-accept", strconv.FormatFloat(fs.Accept, 'g', -1, 64))
	add("out", out)
	return strings.Join(parts, " ")
}

func shellQuote(s string) string {
	if s != "" && strings.IndexFunc(s, func(r rune) bool {
		return !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || strings.ContainsRune("-_./,=:[]", r))
	}) < 0 {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}
