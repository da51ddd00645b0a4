package report

import (
	"bytes"
	"encoding/base64"
	"fmt"
	"html/template"
	"io"
	"math"
	"path/filepath"
	"slices"
	"strings"

	"spillway/funnel/data"
	"spillway/funnel/fitfolder"
	"spillway/funnel/window"
	"spillway/mediation"
	"spillway/plots"
)

// Write writes the quarterly-review report for the window (see
// fitfolder.Fit.Window: empty means the last full quarter) to w as one
// self-contained HTML page. charts maps chart names (plots.NamesOf) to PNG
// bytes, embedded as data URIs; a nil map renders them with plots.Render.
// A chart missing from a non-nil map is left out. Nothing is written to w
// when an error is returned. The error is a *fitfolder.WindowError when the
// window is not in effects.csv.
func Write(w io.Writer, f *fitfolder.Fit, window string, charts map[string][]byte) error {
	win, err := f.Window(window)
	if err != nil {
		return err
	}
	if charts == nil {
		if charts, err = plots.Render(f, win.Name); err != nil {
			return err
		}
	}
	v, err := build(f, win, charts)
	if err != nil {
		return err
	}
	if v.Validation, err = loadValidation(f.Dir); err != nil {
		return fmt.Errorf("report: validation: %w", err)
	}
	if v.Plan, err = planSection(f); err != nil {
		return fmt.Errorf("report: plan: %w", err)
	}
	v.Drift = driftSection(f)
	var buf bytes.Buffer
	if err := page.Execute(&buf, v); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	_, err = w.Write(buf.Bytes())
	return err
}

// view is what the template shows; every number in it is already
// formatted.
type view struct {
	Title, Subtitle string
	Trustworthy     bool
	Reasons         []string
	// Notes are the support check's result, what the data cannot tell and
	// counts too small for the model's noise, shown under the verdict.
	Notes        []string
	Checks       string
	Job          string
	Findings     []string
	Quarter      bool
	Window       string // window name, "all" or a range
	WindowLabel  string
	Compare      *compareView
	CompareNote  string
	Charts       []chartView
	EffectTables []effectTable
	PerLabel     string
	Borrowed     []borrowedRow
	BorrowedNote string
	Returns      []returnRow
	ReturnsNote  string
	Implied      []impliedRow
	ImpliedNote  string
	Assumptions  []string
	Sensitivity  []string
	Cautions     []string
	Data         dataView
	Stages       []stageRow
	Command      string // redoes the whole job into a new folder
	Rebuild      string // rebuilds this page from the fit folder
	Validation   *validationView
	Plan         *planView
	// Regions is the Regions section of a panel of regions; nil otherwise.
	Regions *regionsView
	Drift   *driftView
}

type chartView struct {
	Name, Title, Alt string
	Src              template.URL
}

type effectRow struct {
	Channel, Path, PathLabel, Window string
	Mean, Interval, Q05, Q95, Per    string
}

type effectTable struct {
	ID, Heading, Weeks string
	Rows               []effectRow
}

type borrowedRow struct {
	Channel, Measure, Label, Mean, Interval string
}

type compareView struct {
	Window, Prev, Year string
	Rows               []compareRow
}

// impliedRow is a row of the prior predictive check of the returns: a
// median and 90% interval as stated, under the priors and under the
// posterior.
type impliedRow struct {
	Column, Channel, Path, Window, Measure string
	Stated, Prior, Posterior               string
}

type returnRow struct {
	Column, Channel             string
	ROS, Cost, ROSAll, Marginal string
}

type compareRow struct {
	Channel, PathLabel   string
	PrevSpend, YearSpend string // relative change of the channel's spend
	Now, Prev, Year      string
	PrevChange, PrevSig  string
	YearChange, YearSig  string
	PrevClear, YearClear bool
}

type dataView struct {
	Weeks, Range, Regions string
	WindowWeeks           string
	Spend                 []spendRow
	Outcome, Queries      string
	OutcomeName, QName    string
	Currency              string // " (EUR)" after spend headings, or empty
}

type spendRow struct {
	Channel, Role, Total, Share, Window string
}

type stageRow struct {
	Stage, Params, MaxRhat, MinBulk, MinTail, Divergences, Seconds string
	Fails                                                          bool
}

var pathLabels = map[string]string{
	fitfolder.PathDirect:        "direct",
	fitfolder.PathViaSearch:     "via branded search",
	fitfolder.PathTotal:         "total",
	fitfolder.PathMediatedShare: "share via search",
}

// chartTitles describes each chart for its heading and alt text.
var chartTitles = map[string][2]string{
	"split":       {"Direct and via-search effect of each upper-funnel channel", "Stacked bars of direct and via-search incremental outcome per upper-funnel channel, for the review window and the whole period, with 90% intervals."},
	"borrowed":    {"Demand paid search borrows from the upper funnel", "Horizontal bars of paid search's apparent and controlled incremental outcome, the borrowed share, and the refit without queries as a cross-check."},
	"curves":      {"Response curves", "Weekly incremental outcome against weekly spend for each upper-funnel channel, direct, via search and total, with 90% bands and the current spend marked."},
	"weekly":      {"Weekly contributions", "Weekly direct and via-search contributions of each channel over time, with 90% bands and the review window shaded."},
	"fit":         {"Fit against actuals", "Actual and fitted weekly branded queries and outcome with the 90% predictive band."},
	"sensitivity": {"Sensitivity to an unmeasured common cause", "Via-search effect against the assumed error correlation rho, with its 90% band, the zero line and the rho at which it reaches zero."},
	"regions":     {"Share via branded search by region", "Each region's share of each upper-funnel channel's effect that runs through branded search over the whole period, with 90% intervals, sorted, against the pooled share of all regions summed."},
	"diagnostics": {"Convergence checks", "R-hat and effective sample size of every parameter against the thresholds 1.01 and 400."},
	"drift":       {"Effectiveness over time", "Each drifting channel's multiplier on each path by week with its 90% band and the line at its average, and the lift tests drawn across their weeks as the multipliers they imply."}, // plots.DriftName
}

// perScale chooses how per-unit-spend values are shown: per unit, or per
// 1,000 of spend when values per unit are small (conversions per currency
// unit). It returns the factor and the column heading.
func perScale(f *fitfolder.Fit) (float64, string) {
	var vs []float64
	for _, e := range f.Effects {
		if e.Path == fitfolder.PathTotal && !math.IsNaN(e.PerUnitSpend) && e.Window == "all" {
			vs = append(vs, math.Abs(e.PerUnitSpend))
		}
	}
	if len(vs) == 0 {
		return 1, "per unit of spend"
	}
	slices.Sort(vs)
	if vs[len(vs)/2] < 0.1 {
		return 1000, "per 1,000 of spend"
	}
	return 1, "per unit of spend"
}

// interval formats a 90% interval as "lo to hi".
func interval(lo, hi float64) string {
	return plots.Number(lo) + " to " + plots.Number(hi)
}

func pctInterval(lo, hi float64) string {
	return plots.Percent(lo) + " to " + plots.Percent(hi)
}

func build(f *fitfolder.Fit, w window.Window, charts map[string][]byte) (*view, error) {
	spec := f.Run.Spec
	lab := plots.LabelsOf(f)
	outcome := lab.Outcome()
	whole := f.Whole()
	uppers := lab.Channels(spec.Upper)
	v := &view{
		Trustworthy: f.Verdict.Trustworthy,
		Window:      w.Name,
		WindowLabel: w.Label(),
		Quarter:     w.Kind == window.Quarter,
		Command:     f.Run.Command,
	}
	if w.Kind == window.WholePeriod {
		v.Title = "Review of the whole period"
	} else if w.Kind == window.Quarter {
		v.Title = "Quarterly review: " + w.Label()
		if p := plots.Partial(f, w); p != "" {
			v.Title += ", " + p
			have, full := w.Coverage(f.Data.Weeks)
			v.Findings = append(v.Findings, fmt.Sprintf("%s is a partial quarter: the data hold %d of its %d weeks and end "+
				"with the week starting %s, so its effects sum fewer weeks than a full quarter and leave out the carryover "+
				"of its spend past the data's end. Compare it with full quarters with care.",
				w.Name, have, full, window.Day(whole.End)))
		}
	} else {
		v.Title = "Review: " + w.Label()
	}
	v.Subtitle = fmt.Sprintf("%s on %s from %s and %s, %s (%d weeks). Fit folder %s.",
		plots.Capital(outcome), plots.List(uppers), plots.Plain(spec.Queries),
		plots.List(lab.Channels(spec.Search)), dateRange(whole), len(f.Data.Weeks), filepath.Base(filepath.Clean(f.Dir)))
	supported := mediaSupported(f.Verdict)
	for _, r := range f.Verdict.Reasons {
		switch {
		case r.Stage == "support" || r.Stage == "effect":
			// the support check and what the data cannot tell: shown at the
			// top whether or not the sampler's checks passed
			if text, ok := strings.CutPrefix(r.Text, "note: "); ok {
				v.Notes = append(v.Notes, text)
			} else {
				v.Reasons = append(v.Reasons, r.Text)
			}
		case r.Stage != "":
			v.Reasons = append(v.Reasons, r.Stage+" stage: "+r.Text)
		default:
			v.Reasons = append(v.Reasons, r.Text)
		}
	}
	for _, w := range f.Data.Warnings {
		// small counts weaken the noise model itself, so they stand beside
		// the verdict; the other data warnings are printed when reading
		if w.Kind == data.KindCounts {
			v.Notes = append(v.Notes, "Data: "+w.Message+".")
		}
	}
	v.Job = fmt.Sprintf("This report splits the effect of %s on %s into the part that runs through branded search "+
		"(people who see the ads and then search for the brand) and the direct part, and shows how much of %s's "+
		"apparent return is demand borrowed from them.", plots.List(uppers), outcome, lab.PaidSearch(spec.Search))

	// Stage checks.
	allPass := true
	for _, st := range f.Stages {
		row := stageRow{Stage: st.Name, Params: fmt.Sprint(len(st.Params))}
		maxR, minB, minT := math.Inf(-1), math.Inf(1), math.Inf(1)
		for _, p := range st.Params {
			if !math.IsNaN(p.Rhat) {
				maxR = math.Max(maxR, p.Rhat)
			}
			if !math.IsNaN(p.ESSBulk) {
				minB = math.Min(minB, p.ESSBulk)
			}
			if !math.IsNaN(p.ESSTail) {
				minT = math.Min(minT, p.ESSTail)
			}
		}
		row.MaxRhat = fmt.Sprintf("%.3f", maxR)
		row.MinBulk = plots.Number(minB)
		row.MinTail = plots.Number(minT)
		d := st.Stats.TotalDivergences()
		row.Divergences = fmt.Sprint(d)
		row.Seconds = fmt.Sprintf("%.1f", st.Stats.WallSeconds)
		row.Fails = maxR > plots.RhatMax || minB < plots.ESSMin || minT < plots.ESSMin || d > 0
		allPass = allPass && !row.Fails
		v.Stages = append(v.Stages, row)
	}
	if allPass {
		v.Checks = fmt.Sprintf("Every stage passes the convergence checks: R-hat at most %.2f and effective sample size at least %d for every parameter, and no divergent transitions.", plots.RhatMax, plots.ESSMin)
	} else {
		v.Checks = fmt.Sprintf("Some checks fail (R-hat above %.2f, effective sample size below %d, or divergent transitions): see the table.", plots.RhatMax, plots.ESSMin)
	}

	k, perLabel := perScale(f)
	if c := lab.Currency(); c != "" {
		perLabel = strings.Replace(strings.Replace(perLabel, "per unit of spend", "per "+c+" of spend", 1), "per 1,000 of spend", "per "+c+" 1,000 of spend", 1)
	}
	v.PerLabel = perLabel

	// Findings.
	if !f.Verdict.Trustworthy {
		v.Findings = append(v.Findings, "The fit failed its checks (see the top of this report): treat every number below as provisional.")
	}
	when := windowPhraseShort(w)
	if p := plots.Partial(f, w); p != "" {
		when += " (" + p + ")"
	}
	for _, ch := range spec.Upper {
		s, ok1 := f.Effect(ch, fitfolder.PathMediatedShare, w.Name)
		t, ok2 := f.Effect(ch, fitfolder.PathTotal, w.Name)
		if !ok1 || !ok2 {
			continue
		}
		v.Findings = append(v.Findings, fmt.Sprintf("%s of %s's effect on %s %s ran through branded search (90%% interval %s).",
			plots.Percent(s.Mean), lab.Channel(ch), outcome, when, pctInterval(s.Q05, s.Q95)))
		per := ""
		if !math.IsNaN(t.PerUnitSpend) {
			per = fmt.Sprintf(", or %s %s", plots.Number(t.PerUnitSpend*k), perLabel)
		}
		v.Findings = append(v.Findings, fmt.Sprintf("With the via-search part credited, %s brought %s incremental %s %s (90%% interval %s)%s.",
			lab.Channel(ch), plots.Number(t.Mean), outcome, when, interval(t.Q05, t.Q95), per))
	}
	for _, ch := range spec.Search {
		sh, ok1 := f.BorrowedMeasure(ch, "borrowed_share")
		ap, ok2 := f.BorrowedMeasure(ch, "apparent")
		co, ok3 := f.BorrowedMeasure(ch, "controlled")
		if !ok1 || !ok2 || !ok3 {
			continue
		}
		v.Findings = append(v.Findings, fmt.Sprintf("%s of %s's apparent return over the whole period is demand borrowed from %s "+
			"(90%% interval %s): a model without branded queries would credit it with %s %s, but once they are accounted for its own incremental %s is %s.",
			plots.Percent(sh.Mean), lab.PaidSearch([]string{ch}), plots.List(uppers), pctInterval(sh.Q05, sh.Q95),
			plots.Number(ap.Mean), outcome, outcome, plots.Number(co.Mean)))
	}

	// Quarter comparisons.
	if w.Kind == window.Quarter {
		cv, notes, err := compareQuarters(f, w, supported)
		if err != nil {
			return nil, err
		}
		v.Compare = cv
		v.CompareNote = strings.Join(notes, " ")
		for _, ch := range spec.Upper {
			if c, err := Compare(f, ch, fitfolder.PathTotal, w.Name, cv.Prev); err == nil {
				v.Findings = append(v.Findings, changeSentence(c, lab.Channel(c.Channel), outcome, supported, partialOf(f, w.Name, cv.Prev)))
			}
		}
	} else {
		v.CompareNote = "Quarter-on-quarter comparisons are made when the review window is a quarter (for example --window 2025Q3)."
	}

	// Sensitivity and assumptions.
	v.Assumptions = []string{
		fmt.Sprintf("No unmeasured common cause of branded queries and %s (sequential ignorability): once spend, trend, "+
			"seasonality and the controls are accounted for, nothing else moves both the searches and the %s. "+
			"If something does (a competitor's campaign, news about the brand), part of what is credited to the path through branded search belongs to it.", outcome, outcome),
		"No unmeasured confounder of spend and the outcome: budgets were not set in reaction to shocks that the controls do not capture.",
		"The model's form: geometric adstock and Hill saturation for each channel, effects that are stable over the period, and normal errors.",
	}
	sens, fragile := sensitivityText(f, outcome)
	v.Sensitivity = sens
	if fragile != "" {
		v.Findings = append(v.Findings, fragile)
	}
	v.Cautions = []string{
		"Estimates from observational data rest on assumptions that this report names (above); they are not measured lifts.",
		"Before moving a large budget, confirm with a controlled experiment (a geographic or time-based lift test).",
		"Intervals are model-based and can be too narrow if the model is misspecified.",
		"Response curves extrapolate beyond the spend levels seen in the data; read them near the current level.",
	}

	// Charts.
	for _, n := range plots.NamesOf(f) {
		b, ok := charts[n]
		if !ok {
			continue
		}
		t := chartTitles[n]
		v.Charts = append(v.Charts, chartView{Name: n, Title: t[0], Alt: t[1],
			Src: template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(b))})
	}

	// Effect tables: the window, then the whole period.
	windows := []window.Window{w}
	if w.Kind != window.WholePeriod {
		windows = append(windows, whole)
	}
	for _, tw := range windows {
		tab := effectTable{ID: "effects-" + tw.Name, Weeks: weeksText(f, tw)}
		if tw.Kind == window.WholePeriod {
			tab.Heading = "Whole period"
		} else {
			tab.Heading = tw.Label()
		}
		for _, ch := range append(slices.Clone(spec.Upper), spec.Search...) {
			for _, p := range []string{fitfolder.PathViaSearch, fitfolder.PathDirect, fitfolder.PathTotal, fitfolder.PathMediatedShare} {
				e, ok := f.Effect(ch, p, tw.Name)
				if !ok {
					continue
				}
				row := effectRow{Channel: lab.Channel(ch), Path: p, PathLabel: pathLabels[p], Window: tw.Name}
				if p == fitfolder.PathMediatedShare {
					row.Mean, row.Q05, row.Q95 = plots.Percent(e.Mean), plots.Percent(e.Q05), plots.Percent(e.Q95)
					row.Per = ""
				} else {
					row.Mean, row.Q05, row.Q95 = plots.Number(e.Mean), plots.Number(e.Q05), plots.Number(e.Q95)
					row.Per = plots.Number(e.PerUnitSpend * k)
				}
				row.Interval = row.Q05 + " to " + row.Q95
				tab.Rows = append(tab.Rows, row)
			}
		}
		v.EffectTables = append(v.EffectTables, tab)
	}

	// Borrowed demand.
	labels := map[string]string{
		"apparent":       "apparent: credited by a model without branded queries",
		"controlled":     "controlled: its own incremental " + outcome,
		"naive":          "refit without queries (cross-check of apparent)",
		"borrowed_share": "share of apparent borrowed from the upper funnel",
	}
	for _, ch := range spec.Search {
		for _, m := range []string{"apparent", "controlled", "borrowed_share", "naive"} {
			b, ok := f.BorrowedMeasure(ch, m)
			if !ok {
				continue
			}
			row := borrowedRow{Channel: lab.Channel(ch), Measure: m, Label: labels[m]}
			if m == "borrowed_share" {
				row.Mean, row.Interval = plots.Percent(b.Mean), pctInterval(b.Q05, b.Q95)
			} else {
				row.Mean, row.Interval = plots.Number(b.Mean), interval(b.Q05, b.Q95)
			}
			v.Borrowed = append(v.Borrowed, row)
		}
	}
	v.BorrowedNote = fmt.Sprintf("Incremental %s over the whole period (%s). The apparent figure is what paid search "+
		"would be credited with if the model left branded queries out (per posterior draw, the estimate of a model without "+
		"the query term, with its priors); the difference is demand that the upper funnel created and paid search captured. "+
		"The borrowed share is, per posterior draw, (apparent - controlled) / apparent (divided by the controlled figure on a draw where the apparent one is smaller); the table gives its mean and 90%% "+
		"interval, as do the chart and the headline. The separate refit without queries is a cross-check of the apparent figure.",
		outcome, weeksText(f, whole))
	for _, n := range mediation.NaiveCheck(f.Borrowed) {
		v.BorrowedNote += " " + strings.TrimPrefix(n, "note: ")
	}

	// Returns.
	if f.Returns != nil {
		withIv := func(r fitfolder.Return, ok bool, scale float64, format func(float64) string) string {
			if !ok {
				return "–"
			}
			return format(r.Mean*scale) + " (" + format(r.Q05*scale) + " to " + format(r.Q95*scale) + ")"
		}
		for _, ch := range spec.Upper {
			ros, ok1 := f.ReturnMeasure(ch, w.Name, "return_on_spend")
			cost, ok2 := f.ReturnMeasure(ch, w.Name, "cost_per_incremental")
			all, ok3 := f.ReturnMeasure(ch, "all", "return_on_spend")
			marg, ok4 := f.ReturnMeasure(ch, "all", "marginal_return")
			if !ok1 && !ok2 && !ok3 && !ok4 {
				continue
			}
			v.Returns = append(v.Returns, returnRow{Column: ch, Channel: lab.Channel(ch),
				ROS: withIv(ros, ok1, k, plots.Number), Cost: withIv(cost, ok2, 1, lab.Spend),
				ROSAll: withIv(all, ok3, k, plots.Number), Marginal: withIv(marg, ok4, k, plots.Number)})
		}
		v.ReturnsNote = fmt.Sprintf("Posterior mean and 90%% interval. Return on spend: the channel's total incremental %s "+
			"(both paths, carryover after the window included) %s in the window. Cost per incremental %s: its spend divided by that total "+
			"(the interval is the return's, turned over). Marginal return: the extra weekly %s per extra unit of weekly spend "+
			"at the channel's current weekly spend (its mean over the data), the slope of the steady-state response curve there, shown %s; "+
			"below the return on spend, extra spend buys less than the spend so far did.", outcome, perLabel, outcome, outcome, perLabel)
	}

	// Regions.
	var regionFinding string
	if v.Regions, regionFinding = regionsSection(f, k, perLabel); v.Regions != nil {
		if regionFinding != "" {
			v.Findings = append(v.Findings, regionFinding)
		}
		v.Cautions = append(v.Cautions, "Regional answers lean on the other regions (partial pooling) and, among many regions, "+
			"a few look different by chance: confirm a regional difference with a regional lift test before moving budget between regions.")
	}
	v.Implied, v.ImpliedNote = impliedView(f, lab, k, perLabel, outcome)
	var stated []string
	for _, r := range f.Implied {
		if r.Stated() && !slices.Contains(stated, lab.Channel(r.Channel)) {
			stated = append(stated, lab.Channel(r.Channel))
		}
	}
	if len(stated) > 0 {
		v.Cautions = append(v.Cautions, fmt.Sprintf("The priors file states a prior on the return of %s. A stated prior can dominate weak data: "+
			"the table \"What the priors assumed\" shows it beside the posterior; where the two agree and the data moved little, the number is the assumption, not a finding.",
			strings.Join(stated, ", ")))
	}

	// Data summary.
	v.Data = dataSummary(f, w)
	v.Command, v.Rebuild = rerunCommands(f, w)
	return v, nil
}

// rerunCommands returns the command that redoes the whole job behind this
// page (fit, split, charts and report, with the same data, seed and
// window) into a new folder, and the one that rebuilds the page alone from
// the fit folder. The fit's command ends with --out FOLDER; fit becomes
// run, which also splits, draws and reports, and the folder gets the
// suffix -rerun, because an existing folder is never overwritten without
// --force.
func rerunCommands(f *fitfolder.Fit, w window.Window) (rerun, rebuild string) {
	cmd := f.Run.Command
	if rest, ok := strings.CutPrefix(cmd, "spillway fit "); ok {
		cmd = "spillway run " + rest
	}
	folder := filepath.Clean(f.Dir)
	if i := strings.LastIndex(cmd, " --out "); i >= 0 {
		out := cmd[i+len(" --out "):]
		cmd = cmd[:i]
		next := out + "-rerun"
		if strings.ContainsAny(out, "'\"\\ ") {
			next = "spillway-rerun"
		}
		cmd += " --window " + w.Name + " --out " + next
	}
	return cmd, "spillway report --fit " + shellWord(folder) + " --window " + w.Name + " --force"
}

// shellWord quotes s for a POSIX shell when it holds anything but plain
// path characters.
func shellWord(s string) string {
	if s != "" && strings.IndexFunc(s, func(r rune) bool {
		return !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || strings.ContainsRune("-_./,=:+", r))
	}) < 0 {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// currencySuffix is " (EUR)" for headings of spend, or empty without a
// currency.
func currencySuffix(lab plots.Labels) string {
	if c := lab.Currency(); c != "" {
		return " (" + c + ")"
	}
	return ""
}

// sensitivityText states where the via-search effects reach zero as the
// errors of the two stages correlate (once, when it is the same rho for
// every channel, as it is in the default model: rho enters through gamma,
// the link every channel's path through branded search shares), and
// benchmarks that rho by the correlation that leaving out each observed
// control would induce (mediation.OmittedControlRho at the posterior
// means of the control's coefficients and the stages' error sds). fragile
// is a caution for the findings when the effects reach zero at |rho| below
// 0.3 or below a control's benchmark of the same sign.
func sensitivityText(f *fitfolder.Fit, outcome string) (lines []string, fragile string) {
	spec := f.Run.Spec
	lab := plots.LabelsOf(f)
	type be struct {
		ch  string
		rho float64
	}
	var crossing []be
	var steady []string
	for _, ch := range spec.Upper {
		rho, ok := f.BreakevenRho(ch)
		switch {
		case !ok:
		case math.IsNaN(rho):
			steady = append(steady, lab.Channel(ch))
		default:
			crossing = append(crossing, be{lab.Channel(ch), rho})
		}
	}
	same := len(crossing) > 1
	for _, c := range crossing {
		same = same && math.Abs(c.rho-crossing[0].rho) < 0.005
	}
	var names []string
	for _, c := range crossing {
		names = append(names, c.ch)
	}
	switch {
	case same && len(steady) == 0:
		lines = append(lines, fmt.Sprintf("The via-search effect of every upper-funnel channel reaches zero at the same error correlation, rho = %s: "+
			"an unmeasured common cause of branded queries and %s strong enough to make the errors of the two stages correlate that much "+
			"would explain away the whole path through branded search. It is one rho for all channels because the correlation acts on the "+
			"link from branded queries to %s, which every channel's path through search shares.", trimFloat(crossing[0].rho), outcome, outcome))
	case same:
		lines = append(lines, fmt.Sprintf("The via-search effects of %s reach zero at the same error correlation, rho = %s, "+
			"the rho at which an unmeasured common cause of branded queries and %s would explain them away.", plots.List(names), trimFloat(crossing[0].rho), outcome))
	default:
		for _, c := range crossing {
			lines = append(lines, fmt.Sprintf("%s's via-search effect would reach zero if an unmeasured common cause made the errors of the two stages correlate at rho = %s.",
				plots.Capital(c.ch), trimFloat(c.rho)))
		}
	}
	for _, ch := range steady {
		lines = append(lines, fmt.Sprintf("%s's via-search effect does not reach zero for any error correlation rho from -0.9 to 0.9.", plots.Capital(ch)))
	}
	if len(crossing) == 0 {
		return lines, ""
	}

	// Benchmarks: how much would leaving out an observed control correlate
	// the errors?
	type bench struct {
		name string
		rho  float64
	}
	var benches []bench
	for _, b := range plots.ControlBenchmarks(f) {
		benches = append(benches, bench{plots.Plain(b.Control), b.Rho})
	}
	var parts []string
	var strong []string
	for _, b := range benches {
		parts = append(parts, fmt.Sprintf("%s, rho = %s", b.name, trimFloat(b.rho)))
	}
	for _, b := range benches {
		if c := crossing[0].rho; b.rho*c > 0 && math.Abs(b.rho) >= math.Abs(c) {
			strong = append(strong, b.name)
		}
	}
	if len(benches) == 0 {
		lines = append(lines, "How large a correlation is plausible: the fit has no observed control to compare with; "+
			"correlations of 0.1 to 0.3 are what a modest common cause would produce.")
	} else {
		g := fmt.Sprintf("How large a correlation is plausible: leaving an observed control out of both stages would make their errors "+
			"correlate at (%s), at the posterior means of its coefficients and the error sds. An unmeasured common cause as strong as ", strings.Join(parts, "; "))
		if len(strong) > 0 {
			g += fmt.Sprintf("%s would be enough to reach the break-even correlation.", plots.List(strong))
		} else {
			g += "any of them would not reach the break-even correlation."
		}
		lines = append(lines, g)
	}
	if min := math.Abs(crossing[0].rho); len(strong) > 0 || min < 0.3 {
		subject := "the via-search effect of " + names[0]
		if len(names) > 1 {
			subject = "the via-search effects of " + plots.List(names)
		}
		why := "a modest correlation"
		if len(strong) > 0 {
			why = "no stronger than leaving out " + plots.List(strong) + " would cause"
		}
		fragile = fmt.Sprintf("Caution: %s would vanish if an unmeasured common cause of branded queries and %s made the errors of the two stages "+
			"correlate at rho = %s, %s; see the sensitivity section.", subject, outcome, trimFloat(crossing[0].rho), why)
	}
	return lines, fragile
}

func windowPhraseShort(w window.Window) string {
	switch w.Kind {
	case window.Quarter:
		return "in " + w.Name
	case window.Custom:
		return fmt.Sprintf("from %s to %s", window.Day(w.Start), window.Day(w.End))
	}
	return "over the whole period"
}

func dateRange(w window.Window) string {
	return window.Day(w.Start) + " – " + window.Day(w.End)
}

func weeksText(f *fitfolder.Fit, w window.Window) string {
	n := f.Data.WeeksIn(w)
	if n == 0 {
		return "no weeks of data"
	}
	var first, last string
	for _, t := range f.Data.Weeks {
		if w.Contains(t) {
			if first == "" {
				first = window.Day(t)
			}
			last = window.Day(t)
		}
	}
	if n == 1 {
		return "1 week starting " + first
	}
	return fmt.Sprintf("%d weeks starting %s – %s", n, first, last)
}

func trimFloat(v float64) string {
	s := fmt.Sprintf("%.2f", v)
	s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	if s == "-0" {
		return "0"
	}
	return s
}

// partialOf names the quarters among ws that the data cover only in part,
// with how much of each they hold: "2025Q4 (partial: 12 of 13 weeks)".
func partialOf(f *fitfolder.Fit, names ...string) []string {
	var out []string
	for _, n := range names {
		w, err := window.Parse(n)
		if err != nil {
			continue
		}
		if p := plots.Partial(f, w); p != "" {
			out = append(out, w.Name+" ("+p+")")
		}
	}
	return out
}

// changeSentence says how a total effect moved between two quarters and
// whether the move is clear: not when the media effects are not
// supported by the data, nor when partial names quarters of the two that
// the data cover only in part.
func changeSentence(c Change, name, outcome string, supported bool, partial []string) string {
	dir := "rose"
	if c.Mean < 0 {
		dir = "fell"
	}
	rel := ""
	if r := c.Relative(); !math.IsNaN(r) {
		rel = " (" + plots.Percent(math.Abs(r)) + ")"
	}
	verdict := "the 90% interval of the change excludes zero, so the change is clear"
	switch {
	case !c.ExcludesZero():
		verdict = "the 90% interval of the change includes zero, so it may be noise"
	case !supported:
		verdict = "the media effects themselves are not supported by the data (see the top of this report), so no change between quarters is clear"
	case len(partial) > 0:
		verdict = "the 90% interval of the change excludes zero, but " + plots.List(partial) +
			" is only partly in the data, so part of the change is the shorter window and the carryover cut at the data's end"
	}
	return fmt.Sprintf("%s's total effect %s by %s %s%s from %s to %s; %s (%s).",
		plots.Capital(name), dir, plots.Number(math.Abs(c.Mean)), outcome, rel, c.Base, c.Window,
		verdict, signedInterval(c.Q05, c.Q95))
}

func signedInterval(lo, hi float64) string {
	return plots.Signed(lo) + " to " + plots.Signed(hi)
}

func pointsInterval(lo, hi float64) string {
	return strings.TrimSuffix(plots.Points(lo), " pts") + " to " + plots.Points(hi)
}

// compareQuarters builds the comparison of w with the previous quarter and
// the same quarter a year earlier, for every channel and path with draws.
// Without support for the media effects (supported false) no change is
// called clear.
func compareQuarters(f *fitfolder.Fit, w window.Window, supported bool) (*compareView, []string, error) {
	prev, _ := w.Previous()
	year, _ := w.YearEarlier()
	cv := &compareView{Window: w.Name, Prev: prev.Name, Year: year.Name}
	lab := plots.LabelsOf(f)
	var notes []string
	hasPrev, hasYear := f.HasWindow(prev.Name), f.HasWindow(year.Name)
	if !hasPrev {
		notes = append(notes, fmt.Sprintf("%s is not in effects.csv, so there is no comparison with the previous quarter.", prev.Name))
	}
	if !hasYear {
		notes = append(notes, fmt.Sprintf("%s is not in effects.csv, so there is no comparison with a year earlier.", year.Name))
	}
	spec := f.Run.Spec
	for _, ch := range append(slices.Clone(spec.Upper), spec.Search...) {
		for _, p := range []string{fitfolder.PathViaSearch, fitfolder.PathDirect, fitfolder.PathTotal, fitfolder.PathMediatedShare} {
			now, ok := f.Effect(ch, p, w.Name)
			if !ok {
				continue
			}
			if p != fitfolder.PathMediatedShare {
				if _, ok := f.EffectDraws[fitfolder.DrawKey{Channel: ch, Path: p, Window: w.Name}]; !ok {
					continue
				}
			}
			if p == fitfolder.PathTotal && !slices.Contains(spec.Upper, ch) {
				// Paid search has one path: its total repeats its direct row.
				continue
			}
			format := plots.Number
			change := func(c Change) string {
				return plots.Signed(c.Mean) + " (" + signedInterval(c.Q05, c.Q95) + ")"
			}
			if p == fitfolder.PathMediatedShare {
				format = plots.Percent
				change = func(c Change) string {
					return plots.Points(c.Mean) + " (" + pointsInterval(c.Q05, c.Q95) + ")"
				}
			}
			row := compareRow{Channel: lab.Channel(ch), PathLabel: pathLabels[p], Now: format(now.Mean),
				Prev: "–", Year: "–", PrevChange: "–", YearChange: "–", PrevSpend: "–", YearSpend: "–"}
			row.PrevSpend = spendChange(f, ch, w, prev, hasPrev)
			row.YearSpend = spendChange(f, ch, w, year, hasYear)
			for _, side := range []struct {
				ok            bool
				base          string
				val, chg, sig *string
				clear         *bool
			}{
				{hasPrev, prev.Name, &row.Prev, &row.PrevChange, &row.PrevSig, &row.PrevClear},
				{hasYear, year.Name, &row.Year, &row.YearChange, &row.YearSig, &row.YearClear},
			} {
				if !side.ok {
					continue
				}
				be, ok := f.Effect(ch, p, side.base)
				if !ok {
					continue
				}
				*side.val = format(be.Mean)
				c, err := Compare(f, ch, p, w.Name, side.base)
				if err != nil {
					return nil, nil, err
				}
				*side.chg = change(c)
				*side.clear = c.ExcludesZero() && supported
				if *side.clear {
					*side.sig = "yes"
				} else {
					*side.sig = "no"
				}
			}
			cv.Rows = append(cv.Rows, row)
		}
	}
	return cv, notes, nil
}

// spendChange is the relative change of channel ch's spend from quarter
// base to quarter w ("+12%", "-30%"), "–" when base is not in the data or
// had no spend.
func spendChange(f *fitfolder.Fit, ch string, w, base window.Window, ok bool) string {
	if !ok {
		return "–"
	}
	b := f.Data.Total(ch, base)
	if !(b > 0) {
		return "–"
	}
	c := f.Data.Total(ch, w)/b - 1
	if c > 0 {
		return "+" + plots.Percent(c)
	}
	return plots.Percent(c)
}

func dataSummary(f *fitfolder.Fit, w window.Window) dataView {
	spec := f.Run.Spec
	lab := plots.LabelsOf(f)
	whole := f.Whole()
	d := dataView{
		Weeks:       fmt.Sprint(len(f.Data.Weeks)),
		Range:       dateRange(whole),
		OutcomeName: lab.Outcome(),
		Currency:    currencySuffix(lab),
		QName:       plots.Plain(spec.Queries),
		Outcome:     plots.Number(f.Data.Total(spec.Outcome, whole)),
		Queries:     plots.Number(f.Data.Total(spec.Queries, whole)),
	}
	if w.Kind != window.WholePeriod {
		d.WindowWeeks = w.Name + ": " + weeksText(f, w)
	}
	if spec.Region != "" {
		d.Regions = fmt.Sprintf("%d regions (column %s)", len(f.Data.Regions), spec.Region)
	} else {
		d.Regions = "one national series"
	}
	all := 0.0
	for _, ch := range append(slices.Clone(spec.Upper), spec.Search...) {
		all += f.Data.Total(ch, whole)
	}
	for _, ch := range spec.Upper {
		t := f.Data.Total(ch, whole)
		d.Spend = append(d.Spend, spendRow{Channel: lab.Channel(ch), Role: "upper funnel", Total: plots.Number(t),
			Share: plots.Percent(t / all), Window: plots.Number(f.Data.Total(ch, w))})
	}
	for _, ch := range spec.Search {
		t := f.Data.Total(ch, whole)
		d.Spend = append(d.Spend, spendRow{Channel: lab.Channel(ch), Role: "paid search", Total: plots.Number(t),
			Share: plots.Percent(t / all), Window: plots.Number(f.Data.Total(ch, w))})
	}
	return d
}

// mediaSupported reports whether the verdict's support check passed: a
// "support" line that is not a note says the media effects are not
// supported. A verdict without the check (an older fit) counts as
// supported.
func mediaSupported(v fitfolder.Verdict) bool {
	for _, r := range v.Reasons {
		if r.Stage == "support" && !strings.HasPrefix(r.Text, "note: ") {
			return false
		}
	}
	return true
}

// impliedView returns the rows of the prior predictive check of the
// returns (priors_implied.csv) and its note; none in folders without it.
// A return on spend stated per unit is shown per k units, as the effects.
func impliedView(f *fitfolder.Fit, lab plots.Labels, k float64, perLabel, outcome string) ([]impliedRow, string) {
	if len(f.Implied) == 0 {
		return nil, ""
	}
	var rows []impliedRow
	for _, r := range f.Implied {
		scale, measure := 1.0, "incremental "+outcome
		if r.Measure == fitfolder.ImpliedReturnOnSpend {
			measure = "return " + perLabel
			if r.Per != 1 {
				cur := ""
				if c := lab.Currency(); c != "" {
					cur = c + " "
				}
				measure = fmt.Sprintf("return per %s%s of spend", cur, plots.Number(r.Per))
			} else {
				scale = k
			}
		}
		med := func(lo, mid, hi float64) string {
			if math.IsNaN(mid) {
				return "–"
			}
			return plots.Number(mid*scale) + " (" + interval(lo*scale, hi*scale) + ")"
		}
		path := map[string]string{fitfolder.PathTotal: "total", fitfolder.PathViaSearch: "via search", fitfolder.PathDirect: "direct"}[r.Path]
		rows = append(rows, impliedRow{Column: r.Channel, Channel: lab.Channel(r.Channel), Path: path, Window: r.Window, Measure: measure,
			Stated: med(r.StatedQ05, r.StatedQ50, r.StatedQ95), Prior: med(r.PriorQ05, r.PriorQ50, r.PriorQ95),
			Posterior: med(r.PostQ05, r.PostQ50, r.PostQ95)})
	}
	note := "Median and 90% interval of each channel's return: as stated in the priors file (\"–\" where none was stated), " +
		"as the model's priors imply it (draws from the priors run through the same counterfactual simulation as the posterior, with no data: " +
		"a prior predictive check) and as the posterior has it. A stated prior can dominate weak data: where the posterior stays close to the prior, " +
		"the data added little and the number is the assumption, not a finding."
	for _, n := range mediation.ImpliedNotes(f.Implied) {
		note += " " + strings.ToUpper(n[:1]) + n[1:] + "."
	}
	return rows, note
}
