package validate

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"time"

	"spillway/funnel/data"
	"spillway/funnel/model"
	"spillway/funnel/validate/score"
)

// Row is one line of validation.csv.
type Row struct {
	// Check is recovery, holdout or stability.
	Check string
	// Effect is the effect path (via_search, direct, total,
	// mediated_share, borrowed_share, or via_search_quarterly etc. for
	// the quarters pooled), the parameter (sbc_rank_p rows: gamma, alpha,
	// delta, beta), or the stage (holdout: demand, outcome,
	// demand_baseline, outcome_baseline).
	Effect string
	// Channel is the spend column; empty for gamma and holdout rows.
	Channel string
	// Metric is coverage_50, coverage_90, bias, width_90 (recovery
	// effects), sbc_rank_p (recovery parameters), mape, crps,
	// coverage_90_forecast (holdout) or max_shift_sd (stability).
	Metric string
	// Value is a fraction for coverages and p-values, a percentage for
	// mape (over the weeks whose actual is not zero), the effect's own unit for bias and width_90 (outcome units,
	// or a fraction for shares), the stage's raw unit per week for crps,
	// and posterior sds for max_shift_sd. NaN means not available.
	Value float64
}

// Verdict is the plain-words finding of one check.
type Verdict struct {
	Check string
	// OK is false when the check found a problem.
	OK bool
	// Headline is the finding ("recovers truth", "over-confident: ...").
	Headline string
	// Details are the numbers behind it, one sentence each.
	Details []string
}

// String returns "check: headline. detail detail".
func (v Verdict) String() string {
	s := v.Check + ": " + v.Headline + "."
	for _, d := range v.Details {
		s += " " + d
	}
	return s
}

// Report is the aggregated validation.
type Report struct {
	Rows     []Row
	Verdicts []Verdict
	// Coverage, Forecasts and Shifts are what the chart draws.
	Coverage  []CoverageBar
	Forecasts []ForecastSeries
	Shifts    []ShiftBar
	// Replicates is the number of recovery data sets.
	Replicates int
	// Caption says how the sweep was run, for the chart.
	Caption string
	// Regions are a region panel's reports region by region (the
	// verdicts and rows above are of the sums over regions); nil for a
	// national sweep.
	Regions []RegionReport
	// fits are the jobs' convergence numbers ("demand/rhat_max", ...).
	fits jobStats
}

// RegionReport is one region's aggregation of a region panel's sweep.
type RegionReport struct {
	Region string
	*Report
}

// CoverageBar is one effect's interval coverage over the replicates.
type CoverageBar struct {
	Label, Path      string
	Cover50, Cover90 float64
	// Flagged marks an effect whose 90% coverage is implausibly low.
	Flagged bool
}

// ForecastSeries is one stage's holdout forecasts, week by week over all
// origins, in raw units.
type ForecastSeries struct {
	// Stage is "demand" or "outcome"; Column the data column it
	// forecasts (the queries or the outcome).
	Stage, Column string
	// Days are the forecast weeks as days since 1970-01-01.
	Days                 []float64
	Actual, Mean, Lo, Hi []float64
	Baseline             []float64
	// NoMedia is the mean forecast of the model without media terms
	// (nil for sweeps run before it existed).
	NoMedia []float64
	// Origins are the origin weeks (days since 1970-01-01).
	Origins []float64
}

// ShiftBar is one effect's largest move over the stability refits.
type ShiftBar struct {
	Label string
	Path  string
	Shift float64 // in posterior sds of the reference fit
	Worst string  // the refit that moved it most ("without 2024Q2")
	// Level is the flag level of that refit (see Swing).
	Level float64
	// Flagged marks a move above its refit's flag level.
	Flagged bool
}

// Swing is the shift, in posterior sds, above which an effect is flagged
// as unstable. Leaving out a fraction f of the weeks moves a calibrated
// posterior mean by chance by about sqrt(f/(1-f)) sds (the full-data
// estimate averages the reduced one with the left-out weeks' own), so a
// refit that leaves out weeks flags only moves above the larger of Swing
// and LeaveOutZ*sqrt(f/(1-f)).
const (
	Swing     = 1.0
	LeaveOutZ = 3.5
)

// swingAt returns the flag level of a refit leaving out weeks of T.
func swingAt(weeks, T int) float64 {
	if weeks <= 0 || weeks >= T {
		return Swing
	}
	f := float64(weeks) / float64(T)
	return math.Max(Swing, LeaveOutZ*math.Sqrt(f/(1-f)))
}

// MinReplicates is the fewest recovery replicates over which "recovers
// truth" can be claimed. The central 95% range of Binomial(n, 0.9) over n
// is 75%-100% at n = 20 (REFERENCES.md section 9: [15, 20]) and 70%-100%
// at n = 10: below 20 replicates, intervals that truly cover 75% would
// pass as often as not, so the sweep could not tell calibrated intervals
// from clearly over-confident ones. Fewer replicates can still show a
// problem (a count far outside its range), never its absence.
const MinReplicates = 20

// Alpha is the family-wise false-alarm rate of the recovery flags: each
// of E tests flags at Alpha/E (Bonferroni).
const Alpha = 0.01

type effectKey struct{ name, path, window string }

// jobStats groups records by job and key.
type jobStats map[int]map[string]float64

func (js jobStats) add(r Record) {
	if js[r.Job] == nil {
		js[r.Job] = map[string]float64{}
	}
	js[r.Job][r.Stat] = r.Value
}

// Aggregate computes the validation table, the verdicts and the chart data
// from the records of a complete sweep.
func Aggregate(res *Results) (*Report, error) {
	if !res.Complete() {
		return nil, errors.New("validate: aggregation needs every job of the sweep; merge the shards first")
	}
	m := res.Manifest
	// a region panel's per-region numbers are aggregated region by region
	// (aggregateRegions); the rest, national or summed over regions, here
	var main []Record
	byRegion := map[string][]Record{}
	for _, r := range res.Records {
		if r.Region == "" {
			main = append(main, r)
			continue
		}
		if !slices.Contains(m.Regions, r.Region) {
			return nil, fmt.Errorf("validate: job %d has numbers of region %q, which manifest.json does not list", r.Job, r.Region)
		}
		byRegion[r.Region] = append(byRegion[r.Region], r)
	}
	rep, err := aggregate(m, main)
	if err != nil {
		return nil, err
	}
	if len(byRegion) > 0 {
		if err := rep.aggregateRegions(m, main, byRegion); err != nil {
			return nil, err
		}
	}
	return rep, nil
}

// aggregate computes the report of one set of records (a national sweep's,
// a panel's sums, or one region's with the fit records).
func aggregate(m Manifest, records []Record) (*Report, error) {
	check := map[int]Job{}
	for _, j := range m.Jobs {
		check[j.Index] = j
	}
	eff := map[effectKey]jobStats{}
	var effOrder []effectKey
	params := map[string]jobStats{}
	var paramOrder []string
	fc := map[[2]string]jobStats{} // stage, week
	var fcOrder [][2]string
	fits := jobStats{}
	plac := placeboStats{}
	for _, r := range records {
		switch r.Kind {
		case "effect":
			k := effectKey{r.Name, r.Path, r.Window}
			if eff[k] == nil {
				eff[k] = jobStats{}
				effOrder = append(effOrder, k)
			}
			eff[k].add(r)
		case "param":
			if params[r.Name] == nil {
				params[r.Name] = jobStats{}
				paramOrder = append(paramOrder, r.Name)
			}
			params[r.Name].add(r)
		case "forecast":
			k := [2]string{r.Name, r.Window}
			if fc[k] == nil {
				fc[k] = jobStats{}
				fcOrder = append(fcOrder, k)
			}
			fc[k].add(r)
		case "placebo":
			plac.add(r)
		case "fit":
			rr := r
			rr.Stat = r.Name + "/" + r.Stat
			fits.add(rr)
		default:
			return nil, fmt.Errorf("validate: unknown record kind %q", r.Kind)
		}
	}
	rep := &Report{fits: fits}
	set := m.Settings
	if set.has(Recovery) {
		rep.recovery(m, eff, effOrder, params, paramOrder)
	}
	if set.has(Holdout) {
		rep.holdout(m, fc, fcOrder)
	}
	if set.has(Stability) {
		rep.stability(m, eff, effOrder, check)
	}
	if set.has(Placebo) {
		rep.placebo(m, plac)
	}
	rep.convergenceNotes(m)
	rep.Caption = caption(m)
	return rep, nil
}

// caption describes the sweep's settings in one sentence.
func caption(m Manifest) string {
	s := m.Settings
	parts := []string{fmt.Sprintf("%d weeks from %s; each refit %d chains × (%d warm-up + %d draws), seed %d", m.Weeks, m.First, s.Chains, s.Warmup, s.Draws, s.Seed)}
	if m.Generator != "" {
		parts = append(parts, "recovery data simulated from "+strings.SplitN(m.Generator, " (", 2)[0])
	}
	if s.has(Holdout) {
		parts = append(parts, fmt.Sprintf("holdout: %d origins × %d weeks", s.Origins, s.Horizon))
	}
	if s.has(Placebo) {
		parts = append(parts, fmt.Sprintf("placebo: %d refits per channel", s.Placebos))
	}
	if m.ReferenceSource == "given" {
		parts = append(parts, "reference: the given fit")
	}
	return strings.Join(parts, "; ") + "."
}

// effectLabel names an effect in plain words ("video via search").
func effectLabel(channel, path string) string {
	ch := plainChannel(channel)
	quarterly := strings.HasSuffix(path, "_quarterly")
	p := strings.TrimSuffix(path, "_quarterly")
	words := map[string]string{"via_search": "via search", "direct": "direct", "total": "total",
		"mediated_share": "mediated share", "borrowed_share": "borrowed share"}[p]
	if words == "" {
		words = strings.ReplaceAll(p, "_", " ")
	}
	s := ch + " " + words
	if quarterly {
		s += " by quarter"
	}
	return s
}

// plainChannel drops a trailing "_spend" and turns underscores into spaces.
func plainChannel(col string) string {
	s := col
	for _, suf := range []string{"_spend", "_cost", "_budget"} {
		if strings.HasSuffix(strings.ToLower(s), suf) && len(s) > len(suf) {
			s = s[:len(s)-len(suf)]
			break
		}
	}
	return strings.ReplaceAll(s, "_", " ")
}

func (rep *Report) recovery(m Manifest, eff map[effectKey]jobStats, order []effectKey, params map[string]jobStats, porder []string) {
	var recJobs []int
	for _, j := range m.Jobs {
		if j.Check == Recovery {
			recJobs = append(recJobs, j.Index)
		}
	}
	R := len(recJobs)
	rep.Replicates = R
	v := Verdict{Check: Recovery, OK: true}
	if R == 0 {
		v.Headline = "not run (no replicates)"
		rep.Verdicts = append(rep.Verdicts, v)
		return
	}
	type acc struct {
		label          string
		path, channel  string
		n, in50, in90  float64
		bias, width, z float64
		nz             float64
		rows           []int
	}
	var accs []*acc
	byName := map[[2]string]*acc{}
	get := func(channel, path string) *acc {
		k := [2]string{channel, path}
		if a := byName[k]; a != nil {
			return a
		}
		a := &acc{label: effectLabel(channel, path), path: path, channel: channel}
		byName[k] = a
		accs = append(accs, a)
		return a
	}
	// whole-period effects first, then the quarters pooled
	for pass := 0; pass < 2; pass++ {
		for _, k := range order {
			if (k.window == "all") != (pass == 0) {
				continue
			}
			st := eff[k]
			path := k.path
			if k.window != "all" {
				path += "_quarterly"
			}
			var a *acc
			for _, j := range recJobs {
				s, ok := st[j]
				if !ok {
					continue
				}
				if a == nil {
					a = get(k.name, path)
				}
				truth := s["truth"]
				boundary := truth == 0 && s["q05"] >= 0
				a.n++
				if score.Covered(truth, s["q25"], s["q75"], s["q50"], boundary) {
					a.in50++
				}
				if score.Covered(truth, s["q05"], s["q95"], s["q90"], boundary) {
					a.in90++
				}
				a.bias += s["mean"] - truth
				a.width += s["q95"] - s["q05"]
				if s["sd"] > 0 {
					a.z += (s["mean"] - truth) / s["sd"]
					a.nz++
				}
			}
		}
	}
	// borrowed shares last among the effects, as in the effect tables
	slices.SortStableFunc(accs, func(a, b *acc) int {
		rank := func(x *acc) int {
			switch {
			case x.path == "borrowed_share":
				return 2
			case strings.HasSuffix(x.path, "_quarterly"):
				return 1
			}
			return 0
		}
		return rank(a) - rank(b)
	})
	E := float64(len(accs))
	var worst *acc
	worstP := 1.0
	var biased []string
	var pooledN, pooledIn90, pooledIn50 float64
	var miscal []string
	for _, a := range accs {
		c50, c90 := a.in50/a.n, a.in90/a.n
		rep.Rows = append(rep.Rows,
			Row{Recovery, a.path, a.channel, "coverage_50", c50},
			Row{Recovery, a.path, a.channel, "coverage_90", c90},
			Row{Recovery, a.path, a.channel, "bias", a.bias / a.n},
			Row{Recovery, a.path, a.channel, "width_90", a.width / a.n})
		if !strings.HasSuffix(a.path, "_quarterly") {
			pooledN += a.n
			pooledIn90 += a.in90
			pooledIn50 += a.in50
		}
		// effective count over the R independent replicates (quarters
		// within one replicate share its errors)
		p := score.BinomialLowerTail(c90*float64(R), R, 0.9)
		flag := p < Alpha/E
		rep.Coverage = append(rep.Coverage, CoverageBar{Label: a.label, Path: a.path, Cover50: c50, Cover90: c90, Flagged: flag})
		if flag && p < worstP {
			worst, worstP = a, p
		}
		// the other three ways out of the binomial range: 50% intervals
		// covering too few or too many true values, 90% intervals too
		// many (too wide); each side tested at Alpha/(4E)
		if !flag {
			for _, t := range []struct {
				k       float64
				p       float64
				what    string
				low, hi bool
			}{{c50 * float64(R), 0.5, "50%", true, true}, {c90 * float64(R), 0.9, "90%", false, true}} {
				if t.low && score.BinomialLowerTail(t.k, R, t.p) < Alpha/(4*E) {
					miscal = append(miscal, fmt.Sprintf("%s %s intervals cover %s (too narrow)", a.label, t.what, pct(t.k/float64(R))))
				} else if t.hi && score.BinomialUpperTail(t.k, R, t.p) < Alpha/(4*E) {
					miscal = append(miscal, fmt.Sprintf("%s %s intervals cover %s (too wide)", a.label, t.what, pct(t.k/float64(R))))
				}
			}
		}
		if a.nz > 0 && math.Abs(a.z/a.nz) > 3/math.Sqrt(float64(R)) {
			biased = append(biased, fmt.Sprintf("%s (%+.1f sd on average)", a.label, a.z/a.nz))
		}
	}
	// calibration ranks
	var sbcBad []string
	minP, minName := 1.0, ""
	P := float64(len(porder))
	for _, name := range porder {
		counts := make([]int, score.SBCBins)
		for _, j := range recJobs {
			s, ok := params[name][j]
			if !ok || s["width"] < 1 {
				continue
			}
			b := int(s["rank"]) / int(s["width"])
			counts[min(b, score.SBCBins-1)]++
		}
		_, p := score.RankUniformity(counts)
		base, ch := model.SplitName(name)
		rep.Rows = append(rep.Rows, Row{Recovery, base, ch, "sbc_rank_p", p})
		if p < minP {
			minP, minName = p, name
		}
		if p < Alpha/P {
			sbcBad = append(sbcBad, fmt.Sprintf("%s (p = %s)", name, fmtP(p)))
		}
	}
	pc90, pc50 := pooledIn90/pooledN, pooledIn50/pooledN
	conv := rep.refits(m, Recovery)
	switch {
	case worst != nil:
		v.OK = false
		v.Headline = fmt.Sprintf("over-confident: 90%% intervals of %s cover %s of true values", worst.label, pct(worst.in90/worst.n))
	case len(biased) > 0:
		v.OK = false
		v.Headline = "biased: " + strings.Join(biased, ", ")
	case len(sbcBad) > 0:
		v.OK = false
		v.Headline = "calibration ranks not uniform for " + strings.Join(sbcBad, ", ")
	case len(miscal) > 0:
		v.OK = false
		v.Headline = "miscalibrated: " + strings.Join(miscal, ", ")
	// A problem found is reported whatever the number of replicates; a
	// clean bill of health needs enough of them, nearly all converged
	// (converge.go).
	case R < MinReplicates:
		v.OK = false
		v.Headline = fmt.Sprintf("no claim: %s are too few to judge coverage (at least %d needed)", plural(R, "simulated data set"), MinReplicates)
	case !enough(conv.bad, conv.n):
		v.OK = false
		v.Headline = fmt.Sprintf("no claim: %d of %s did not converge (at most %.0f%% may)", conv.bad, plural(conv.n, "refit"), 100*(1-MinConvergedShare))
	case conv.bad > 0:
		v.Headline = fmt.Sprintf("recovers truth (%d of %d refits converged; coverage over all %d)", conv.n-conv.bad, conv.n, conv.n)
	default:
		v.Headline = "recovers truth"
	}
	v.Details = append(v.Details, fmt.Sprintf("Over %s, 90%% intervals cover %s and 50%% intervals %s of the true whole-period effects.", plural(R, "simulated data set"), pct(pc90), pct(pc50)))
	if R > 0 {
		lo50, hi50 := score.BinomialRange(R, 0.5, 0.95)
		lo90, hi90 := score.BinomialRange(R, 0.9, 0.95)
		v.Details = append(v.Details, fmt.Sprintf("With %d replicates a calibrated effect's coverage falls by chance in %s-%s (50%% intervals) and %s-%s (90%%) in 95%% of sweeps (binomial); a claim needs at least %d replicates, where the 90%% range is 75%%-100%%.",
			R, pct(float64(lo50)/float64(R)), pct(float64(hi50)/float64(R)), pct(float64(lo90)/float64(R)), pct(float64(hi90)/float64(R)), MinReplicates))
	}
	if len(miscal) > 0 && (worst != nil || len(biased) > 0 || len(sbcBad) > 0) {
		v.Details = append(v.Details, "Miscalibrated: "+strings.Join(miscal, ", ")+".")
	}
	if worst != nil {
		var low []string
		for _, b := range rep.Coverage {
			if b.Flagged {
				low = append(low, fmt.Sprintf("%s %s", b.Label, pct(b.Cover90)))
			}
		}
		v.Details = append(v.Details, fmt.Sprintf("Implausibly low 90%% coverage (binomial test over %d replicates, %s family-wise): %s.", R, pct(Alpha), strings.Join(low, ", ")))
	}
	if len(biased) > 0 && worst != nil {
		v.Details = append(v.Details, "Biased: "+strings.Join(biased, ", ")+".")
	}
	if minName != "" {
		if len(sbcBad) > 0 && (worst != nil || len(biased) > 0) {
			v.Details = append(v.Details, "Calibration ranks not uniform for "+strings.Join(sbcBad, ", ")+".")
		} else if len(sbcBad) == 0 {
			v.Details = append(v.Details, fmt.Sprintf("Calibration ranks of %d key parameters look uniform (smallest p = %s, %s).", len(porder), fmtP(minP), minName))
		}
	}
	if strings.HasPrefix(m.Generator, "posterior") {
		v.Details = append(v.Details, "Replicates are simulated from posterior draws, so this checks the fitting, not whether the model suits the data; holdout and stability check that.")
	}
	rep.Verdicts = append(rep.Verdicts, v)
}

func (rep *Report) holdout(m Manifest, fc map[[2]string]jobStats, order [][2]string) {
	v := Verdict{Check: Holdout, OK: true}
	var hjobs []int
	var origins []string
	for _, j := range m.Jobs {
		if j.Check == Holdout {
			hjobs = append(hjobs, j.Index)
			origins = append(origins, strings.TrimPrefix(j.Label, "origin "))
		}
	}
	if len(hjobs) == 0 {
		v.Headline = "not run (no origins)"
		skippedNotes(&v, m, "origin ")
		rep.Verdicts = append(rep.Verdicts, v)
		return
	}
	// mape counts weeks with a non-zero actual only (nm of them)
	type tally struct {
		mape, crps, cov, n, nm, baseMape, baseCRPS, baseCov, baseN float64
		bareMape, bareCRPS, bareCov, bareN                         float64
		// per forecast week, in job then week order: the job, whether
		// the 90% interval missed, and the CRPS differences model -
		// baseline and model - no media
		job                []int
		miss, dBase, dBare []float64
	}
	var stages []string
	res := map[string]*tally{}
	series := map[string]*ForecastSeries{}
	for _, k := range order {
		stage := k[0]
		s := res[stage]
		if s == nil {
			s = &tally{}
			res[stage] = s
			stages = append(stages, stage)
			col := m.Spec.Outcome
			if stage == "demand" {
				col = m.Spec.Queries
			}
			series[stage] = &ForecastSeries{Stage: stage, Column: col}
		}
		for _, j := range hjobs {
			x, ok := fc[k][j]
			if !ok {
				continue
			}
			y := x["actual"]
			s.n++
			if y != 0 {
				s.nm++
				s.mape += math.Abs(x["mean"]-y) / math.Abs(y)
				s.baseMape += math.Abs(x["base"]-y) / math.Abs(y)
				s.bareMape += math.Abs(x["bare_mean"]-y) / math.Abs(y)
			}
			s.crps += x["crps"]
			miss := 1.0
			if x["q05"] <= y && y <= x["q95"] {
				s.cov++
				miss = 0
			}
			s.baseCRPS += x["base_crps"]
			if x["base_q05"] < x["base_q95"] {
				s.baseN++
				if x["base_q05"] <= y && y <= x["base_q95"] {
					s.baseCov++
				}
			}
			_, hasBare := x["bare_crps"]
			if hasBare {
				s.bareN++
				s.bareCRPS += x["bare_crps"]
				if x["bare_q05"] <= y && y <= x["bare_q95"] {
					s.bareCov++
				}
			}
			s.job = append(s.job, j)
			s.miss = append(s.miss, miss)
			s.dBase = append(s.dBase, x["crps"]-x["base_crps"])
			s.dBare = append(s.dBare, x["crps"]-x["bare_crps"])
			fs := series[stage]
			fs.Days = append(fs.Days, dayOf(k[1]))
			fs.Actual = append(fs.Actual, y)
			fs.Mean = append(fs.Mean, x["mean"])
			fs.Lo = append(fs.Lo, x["q05"])
			fs.Hi = append(fs.Hi, x["q95"])
			fs.Baseline = append(fs.Baseline, x["base"])
			if hasBare {
				fs.NoMedia = append(fs.NoMedia, x["bare_mean"])
			}
		}
	}
	// the records come stage by stage and week by week, each week over
	// the origins; sort each stage's weeks by job (origin) then week so
	// that neighbours in the lag-1 autocorrelation are neighbouring weeks
	// of one origin
	for _, stage := range stages {
		s := res[stage]
		idx := make([]int, len(s.job))
		for i := range idx {
			idx[i] = i
		}
		slices.SortStableFunc(idx, func(a, b int) int { return s.job[a] - s.job[b] })
		perm := func(x []float64) []float64 {
			out := make([]float64, len(x))
			for i, k := range idx {
				out[i] = x[k]
			}
			return out
		}
		job := make([]int, len(idx))
		for i, k := range idx {
			job[i] = s.job[k]
		}
		s.job, s.miss, s.dBase, s.dBare = job, perm(s.miss), perm(s.dBase), perm(s.dBare)
	}
	var problems, good []string
	var lines, covs []string
	for _, stage := range stages {
		s := res[stage]
		baseCov, bareCov := math.NaN(), math.NaN()
		if s.baseN > 0 {
			baseCov = s.baseCov / s.baseN
		}
		bareMape, bareCRPS := math.NaN(), math.NaN()
		if s.bareN > 0 {
			bareCov, bareCRPS = s.bareCov/s.bareN, s.bareCRPS/s.bareN
			bareMape = 100 * s.bareMape / s.nm
		}
		rep.Rows = append(rep.Rows,
			Row{Holdout, stage, "", "mape", 100 * s.mape / s.nm},
			Row{Holdout, stage, "", "crps", s.crps / s.n},
			Row{Holdout, stage, "", "coverage_90_forecast", s.cov / s.n},
			Row{Holdout, stage + "_baseline", "", "mape", 100 * s.baseMape / s.nm},
			Row{Holdout, stage + "_baseline", "", "crps", s.baseCRPS / s.n},
			Row{Holdout, stage + "_baseline", "", "coverage_90_forecast", baseCov})
		if s.bareN > 0 {
			rep.Rows = append(rep.Rows,
				Row{Holdout, stage + "_no_media", "", "mape", bareMape},
				Row{Holdout, stage + "_no_media", "", "crps", bareCRPS},
				Row{Holdout, stage + "_no_media", "", "coverage_90_forecast", bareCov})
		}
		// the seasonal rule
		cmp := Compare(s.dBase, s.job)
		line := fmt.Sprintf("%s: CRPS %s a week vs %s for the seasonal rule", stage, num(s.crps/s.n), num(s.baseCRPS/s.n))
		switch cmp.Verdict() {
		case Better:
			good = append(good, stage+" forecasts beat the seasonal baseline")
		case Worse:
			problems = append(problems, stage+" forecasts are worse than the seasonal baseline")
		default:
			problems = append(problems, stage+" forecasts do not beat the seasonal baseline")
		}
		line += " (" + cmp.String() + ")"
		if s.bareN > 0 {
			cmp := Compare(s.dBare, s.job)
			line += fmt.Sprintf(" and %s without media (%s)", num(bareCRPS), cmp.String())
			switch cmp.Verdict() {
			case Better:
				good = append(good, "media improve the "+stage+" forecast"+beyond(stage))
			case Worse:
				problems = append(problems, "media make the "+stage+" forecast worse"+beyond(stage))
			default:
				problems = append(problems, "media do not measurably improve the "+stage+" forecast"+beyond(stage))
			}
		}
		lines = append(lines, line)
		cov := CoverageOf(s.miss, s.job, 0.9)
		rep.Rows = append(rep.Rows, Row{Holdout, stage, "", "effective_weeks", cov.NEff})
		covs = append(covs, stage+" "+cov.String())
		switch cov.Verdict() {
		case Worse:
			problems = append(problems, fmt.Sprintf("%s forecast intervals too narrow (%s of weeks inside 90%% intervals)", stage, pct(cov.Rate)))
		case Better:
			problems = append(problems, fmt.Sprintf("%s forecast intervals too wide (%s of weeks inside 90%% intervals)", stage, pct(cov.Rate)))
		case Undecided:
			problems = append(problems, fmt.Sprintf("%s forecast coverage not judged (%.0f effective weeks, %d needed)", stage, cov.NEff, MinReplicates))
		}
		fs := series[stage]
		for _, o := range origins {
			fs.Origins = append(fs.Origins, dayOf(o))
		}
		rep.Forecasts = append(rep.Forecasts, *fs)
	}
	n := int(res[stages[0]].n)
	if len(problems) == 0 {
		v.Headline = "forecasts beat the seasonal baseline and the model without media"
	} else {
		v.OK = false
		v.Headline = strings.Join(problems, "; ")
	}
	v.Details = append(v.Details, fmt.Sprintf("Over %s from %s (lower CRPS is better): %s.", plural(n, "forecast week"), plural(len(hjobs), "origin"), strings.Join(lines, "; ")))
	if len(good) > 0 && len(problems) > 0 {
		v.Details = append(v.Details, "Found: "+strings.Join(good, "; ")+".")
	}
	v.Details = append(v.Details, "90% forecast intervals cover "+strings.Join(covs, "; ")+".")
	v.Details = append(v.Details, fmt.Sprintf("Neighbouring forecast weeks are not independent: each comparison and coverage is judged on an effective number of weeks, n (1 - r) / (1 + r) with r the lag-1 autocorrelation within origins; a difference counts when its 95%% interval (Student t) excludes zero (a Diebold-Mariano comparison), a coverage when it leaves the central 95%% binomial range. The baseline is the same week a year earlier times the recent level (last %d training weeks over the same weeks a year before); the model without media is this model with every spend term removed (the outcome stage keeps the queries).", LevelWeeks))
	skippedNotes(&v, m, "origin ")
	rep.Verdicts = append(rep.Verdicts, v)
}

func (rep *Report) stability(m Manifest, eff map[effectKey]jobStats, order []effectKey, jobs map[int]Job) {
	v := Verdict{Check: Stability, OK: true}
	var sjobs []int
	refJob := -1
	for _, j := range m.Jobs {
		switch j.Check {
		case Stability:
			sjobs = append(sjobs, j.Index)
		case Reference:
			refJob = j.Index
		}
	}
	if len(sjobs) == 0 || refJob < 0 {
		v.Headline = "not run (no refits)"
		rep.Verdicts = append(rep.Verdicts, v)
		return
	}
	var swing []string
	var best ShiftBar
	best.Shift = -1
	for _, k := range order {
		if k.window != "all" {
			continue
		}
		ref, ok := eff[k][refJob]
		if !ok {
			continue
		}
		sb := ShiftBar{Label: effectLabel(k.name, k.path), Path: k.path, Level: Swing}
		for _, j := range sjobs {
			s, ok := eff[k][j]
			if !ok {
				continue
			}
			d := math.Abs(s["mean"]-ref["mean"]) / ref["sd"]
			if !(ref["sd"] > 0) {
				d = math.NaN()
			}
			if v, ok := s["shift_sd"]; ok {
				// measured by the job against the reference over the same
				// regions (a panel refit without a region, panel.go)
				d = v
			}
			level := swingAt(jobs[j].Weeks, m.Weeks)
			if d > sb.Shift || math.IsNaN(d) {
				sb.Shift, sb.Worst, sb.Level = d, jobs[j].Label, level
			}
			if d > level || math.IsNaN(d) {
				sb.Flagged = true
			}
		}
		rep.Rows = append(rep.Rows, Row{Stability, k.path, k.name, "max_shift_sd", sb.Shift})
		rep.Shifts = append(rep.Shifts, sb)
		if sb.Flagged {
			swing = append(swing, fmt.Sprintf("%s %.1f sd (%s)", sb.Label, sb.Shift, sb.Worst))
		}
		if best.Shift < 0 || (sb.Flagged && !best.Flagged) || (sb.Flagged == best.Flagged && (sb.Shift > best.Shift || math.IsNaN(sb.Shift))) {
			best = sb
		}
	}
	nq, ns, nr := 0, 0, 0
	for _, j := range sjobs {
		switch {
		case jobs[j].Quarter != "":
			nq++
		case jobs[j].Region != "":
			nr++
		default:
			ns++
		}
	}
	conv := rep.refits(m, Stability)
	refBad := false
	if r, ok := rep.fits[refJob]; ok && !rep.converged(m, r) {
		refBad = true
	}
	switch {
	case len(swing) == 0 && refBad:
		v.OK = false
		v.Headline = "no claim: the reference fit did not converge"
		v.Details = append(v.Details, fmt.Sprintf("No effect moved more than %.1f sd (largest: %s, %s), but every move is measured against the reference fit.", math.Ceil(best.Shift*10)/10, best.Label, best.Worst))
	case len(swing) == 0 && !enough(conv.bad, conv.n):
		v.OK = false
		v.Headline = fmt.Sprintf("no claim: %d of %s did not converge (at most %.0f%% may)", conv.bad, plural(conv.n, "refit"), 100*(1-MinConvergedShare))
		v.Details = append(v.Details, fmt.Sprintf("No effect moved more than %.1f sd (largest: %s, %s), but moves between unconverged fits say little.", math.Ceil(best.Shift*10)/10, best.Label, best.Worst))
	case len(swing) == 0:
		v.Headline = fmt.Sprintf("stable: no effect moved more than %.1f sd", math.Ceil(best.Shift*10)/10)
		v.Details = append(v.Details, fmt.Sprintf("The largest move was %s, %s.", best.Label, best.Worst))
		v.Details = append(v.Details, "Stable is not the same as supported: an effect the data say little about stays near its prior in every refit; the holdout against the model without media and the placebo check ask whether the data support it.")
	default:
		v.OK = false
		v.Headline = fmt.Sprintf("unstable: %s moved %.1f sd (%s)", best.Label, best.Shift, best.Worst)
		v.Details = append(v.Details, fmt.Sprintf("Effects that moved more than %.0f posterior sd: %s.", Swing, strings.Join(swing, "; ")))
	}
	regionsOut := ""
	if nr > 0 {
		regionsOut = ", " + plural(nr, "refit") + " leaving out one region"
	}
	v.Details = append(v.Details, fmt.Sprintf("Moves are in posterior sds of the reference fit, over %s leaving out one quarter%s and %s with other seeds. A move is flagged above %.0f sd, or, when a fraction f of the weeks is left out, above %.1f sqrt(f/(1-f)) sd if that is larger (%.2f sd for a 13-week quarter of these %d weeks): losing data moves an estimate by about sqrt(f/(1-f)) sd by chance alone.", plural(nq, "refit"), regionsOut, plural(ns, "refit"), Swing, LeaveOutZ, swingAt(13, m.Weeks), m.Weeks))
	skippedNotes(&v, m, "")
	rep.Verdicts = append(rep.Verdicts, v)
}

// beyond qualifies the outcome stage's comparison without media: its
// forecasts use the actual queries, so the comparison asks what the media
// terms add once the queries are known.
func beyond(stage string) string {
	if stage == "outcome" {
		return " beyond the queries"
	}
	return ""
}

// dayOf converts a YYYY-MM-DD week to days since 1970-01-01.
func dayOf(week string) float64 {
	t, err := time.Parse(data.DateLayout, week)
	if err != nil {
		return math.NaN()
	}
	return float64(t.Unix()) / 86400
}

// plural returns "1 origin", "4 origins".
func plural(n int, word string) string {
	if n == 1 {
		return "1 " + word
	}
	return fmt.Sprintf("%d %ss", n, word)
}

func pct(f float64) string {
	if math.IsNaN(f) {
		return "–"
	}
	return fmt.Sprintf("%.0f%%", 100*f)
}

func fmtP(p float64) string {
	if p < 0.001 {
		return fmt.Sprintf("%.1g", p)
	}
	return fmt.Sprintf("%.3f", p)
}

// num formats a score for the verdict text with three significant digits.
func num(v float64) string {
	a := math.Abs(v)
	switch {
	case a >= 1000:
		return fmt.Sprintf("%.0f", v)
	case a >= 100:
		return fmt.Sprintf("%.0f", v)
	case a >= 10:
		return fmt.Sprintf("%.1f", v)
	}
	return fmt.Sprintf("%.3g", v)
}
