package main

import (
	"fmt"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"

	"spillway/funnel/data"
	"spillway/funnel/fitfolder"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/pipeline"
)

// choices are the model choices the fit folder's spec records; the priors
// file is its copy in the folder.
func choices(f *fitfolder.Fit) pipeline.Choices {
	c := pipeline.Choices{Linear: f.Run.Linear, Drift: f.Run.Drift, DriftShape: f.Run.DriftShape, Baseline: f.Run.Baseline}
	if f.Priors != nil {
		c.Priors = f.PriorsPath()
	}
	return c
}

// stageReport is one stage's summaries and verdict.
type stageReport struct {
	name    string
	summary []mcmc.Summary
	verdict mcmc.Verdict
}

// newFit assembles the fit folder of a finished fit (each stage's draws
// and wall time, national or a region panel's): spec, data, priors copy,
// per stage draws, summary and stats, and the verdict.
func newFit(run fitfolder.Run, ds *data.Dataset, priors []byte, fits [3]*mcmc.Fit, wall [3]float64) (*fitfolder.Fit, []stageReport) {
	ff := &fitfolder.Fit{Run: run, Data: &fitfolder.Data{Dataset: ds}, Priors: priors}
	var reps []stageReport
	var verdicts []mcmc.Verdict
	for k, name := range fitfolder.StageNames {
		fit := fits[k]
		sum := mcmc.Summarize(fit)
		ff.Stages = append(ff.Stages, &fitfolder.Stage{Name: name, Params: fitfolder.ParamsOf(sum),
			Stats: fitfolder.StatsOf(fit, wall[k]), Draws: fit})
		reps = append(reps, stageReport{name: name, summary: sum, verdict: mcmc.Judge(fit, sum)})
		verdicts = append(verdicts, reps[k].verdict)
	}
	ff.Verdict = fitfolder.VerdictOf(fitfolder.StageNames, verdicts)
	return ff, reps
}

// fitFolder is a fit folder with the model it was fitted with.
type fitFolder struct {
	*fitfolder.Fit
	// scaled, stages and fits are a national fit's; a region panel's
	// scaled is its first region's (the weeks and column names every region
	// shares), stages are nil and panel holds the model and draws.
	scaled *model.Scaled
	stages [3]*model.Stage
	fits   [3]*mcmc.Fit
	panel  *pipeline.PanelFitted

	// options are the model options of the spec's choices.
	options model.Options
}

// readFitFolder loads a fit folder written by fit with its draws. Problems
// are bad data (exit status 2): the folder is the user's input to split
// and validate.
func readFitFolder(dir string) (*fitFolder, error) {
	f, err := fitfolder.Open(dir)
	if err != nil {
		return nil, badData(err)
	}
	if err := f.ReadDraws(); err != nil {
		return nil, badData(err)
	}
	if isPanel(f.Run, f.Data.Dataset) {
		return readPanelFolder(dir, f)
	}
	ff := &fitFolder{Fit: f, scaled: model.Scale(f.Data.National(), f.Data.Spec)}
	if ff.options, err = choices(f).Options(ff.scaled); err != nil {
		return nil, badData(err)
	}
	if ff.stages, err = pipeline.Stages(ff.scaled, ff.options); err != nil {
		return nil, err
	}
	for k, s := range f.Stages {
		want := ff.stages[k].Names()
		if strings.Join(s.Draws.Names, ",") != strings.Join(want, ",") {
			return nil, badData(fmt.Errorf("%s: parameters %v do not match the model's %v",
				filepath.Join(dir, s.Name, "draws.csv"), s.Draws.Names, want))
		}
		ff.fits[k] = s.Draws
	}
	return ff, nil
}

// isPanel reports whether data fitted with run are fitted as a region
// panel: more than one region, and no --national.
func isPanel(run fitfolder.Run, ds *data.Dataset) bool {
	return ds.Spec.Region != "" && len(ds.Regions) > 1 && !run.National
}

// readPanelFolder rebuilds the region panel of the fit folder f (its draws
// read): each region scaled by its own means, the panel's stages from the
// recorded choices, and each stage's draws checked against the panel's
// parameters.
func readPanelFolder(dir string, f *fitfolder.Fit) (*fitFolder, error) {
	ps, err := model.ScalePanel(f.Data.Dataset, nil)
	if err != nil {
		return nil, badData(fmt.Errorf("%s: %w", filepath.Join(dir, "data.csv"), err))
	}
	ff := &fitFolder{Fit: f, scaled: ps.Scaled[0]}
	if ff.options, err = choices(f).Options(ps.Scaled[0]); err != nil {
		return nil, badData(err)
	}
	panels, err := model.PanelStages(ps, ff.options)
	if err != nil {
		return nil, badData(err)
	}
	ff.panel = &pipeline.PanelFitted{Data: ps, Panels: panels}
	for k, s := range f.Stages {
		if want := panels[k].Names(); !slices.Equal(s.Draws.Names, want) {
			return nil, badData(fmt.Errorf("%s: parameters %v do not match the region panel's %v",
				filepath.Join(dir, s.Name, "draws.csv"), s.Draws.Names, want))
		}
		ff.panel.Fits[k] = s.Draws
	}
	return ff, nil
}

// rerunCommand spells out the command that reproduces a fit.
func rerunCommand(verb string, fs *fitfolder.Run, out string) string {
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
	if len(fs.Drift) > 0 {
		add("drift", strings.Join(fs.Drift, ","))
	}
	add("drift-shape", fs.DriftShape)
	add("baseline", fs.Baseline)
	add("lifts", fs.Lifts)
	if fs.National {
		parts = append(parts, "--national")
	}
	add("seed", strconv.FormatUint(fs.Seed, 10))
	add("chains", strconv.Itoa(fs.Chains))
	add("warmup", strconv.Itoa(fs.Warmup))
	add("draws", strconv.Itoa(fs.Draws))
	if fs.Accept != 0 { // 0: each stage's default
		add("target-accept", strconv.FormatFloat(fs.Accept, 'g', -1, 64))
	}
	for la := range slices.Chunk(labelArgs(fs.Labels), 2) {
		add(strings.TrimPrefix(la[0], "--"), la[1])
	}
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
