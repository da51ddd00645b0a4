package fitfoldertest

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"spillway/funnel/data"
	"spillway/funnel/fitfolder"
	"spillway/funnel/window"
	"spillway/mediation"
)

// PanelOptions changes the panel fixture. The zero value is six regions
// over the fixture of Write's zero Options.
type PanelOptions struct {
	Options
	// Regions is the number of regions, at least 3; 0 means 6.
	Regions int
}

// RegionCol is the panel fixture's region column.
const RegionCol = "region"

// Panel is what WritePanel wrote.
type Panel struct {
	*Fixture
	// Regions are the region names in data order. Regions[0] is much
	// larger than the others, Regions[1] sends three times as much of
	// video's effect through branded search as its spend would (with six
	// regions or more its share is clearly above the pooled one), and the
	// last region never runs audio.
	Regions []string
	// RegionDraws holds each region's effect draws by key (index i is
	// draw i+1), as Fixture.Draws does for the sum.
	RegionDraws map[string]map[fitfolder.DrawKey][]float64
	// RegionSpend is each region's spend per channel and window.
	RegionSpend map[string]map[fitfolder.DrawKey]float64
}

// WritePanel writes a fit folder of a region panel into dir: Write's
// fixture with its data split over regions and its effects allocated to
// them draw by draw, so that the regions' effects add up to effects.csv
// exactly in every draw. effects_by_region.csv, borrowed_by_region.csv and
// region_differences.csv are made by package mediation's table functions
// from per-region results, as a fit makes them, and written through the
// fit folder's writer. The stages' summaries gain region spread
// parameters (tau_...).
func WritePanel(dir string, o PanelOptions) (*Panel, error) {
	if o.Regions == 0 {
		o.Regions = 6
	}
	if o.Regions < 3 {
		return nil, fmt.Errorf("fitfoldertest: a panel needs at least 3 regions, got %d", o.Regions)
	}
	fx, err := Write(dir, o.Options)
	if err != nil {
		return nil, err
	}
	rng := rand.New(rand.NewPCG(fx.seed(o.Options), 13))
	G := o.Regions
	pn := &Panel{Fixture: fx, Regions: regionNames(G),
		RegionDraws: map[string]map[fitfolder.DrawKey][]float64{}, RegionSpend: map[string]map[fitfolder.DrawKey]float64{}}

	// Region sizes: the first five times a typical one.
	size := make([]float64, G)
	for g := range size {
		size[g] = math.Exp(0.4 * rng.NormFloat64())
	}
	size[0] *= 5
	norm(size)
	dark := G - 1 // runs no audio

	// Spend shares per channel: the region's size, zero audio in the dark
	// region.
	spendShare := map[string][]float64{}
	for _, ch := range slices.Concat(Upper, Search) {
		s := slices.Clone(size)
		for g := range s {
			s[g] *= math.Exp(0.15 * rng.NormFloat64())
		}
		if ch == "audio_spend" {
			s[dark] = 0
		}
		norm(s)
		spendShare[ch] = s
	}

	// Regional data: each region's share of spend; queries and outcome by
	// size with noise; the same price everywhere.
	T := len(fx.Weeks)
	var regions []data.Region
	for g, name := range pn.Regions {
		s := data.Series{Weeks: fx.Weeks}
		for _, ch := range Upper {
			s.Upper = append(s.Upper, scaled(fx.Columns[ch], spendShare[ch][g]))
		}
		for _, ch := range Search {
			s.Search = append(s.Search, scaled(fx.Columns[ch], spendShare[ch][g]))
		}
		s.Queries, s.Outcome = make([]float64, T), make([]float64, T)
		for t := range T {
			s.Queries[t] = math.Round(fx.Columns[QueriesCol][t] * size[g] * (1 + 0.02*rng.NormFloat64()))
			s.Outcome[t] = math.Round(fx.Columns[OutcomeCol][t] * size[g] * (1 + 0.02*rng.NormFloat64()))
		}
		s.Controls = [][]float64{fx.Columns[ControlCol]}
		regions = append(regions, data.Region{Name: name, Series: s})
	}
	spec := fx.Spec
	spec.Region = RegionCol
	fx.Spec = spec
	fx.Command = "spillway run --data weekly.csv --date week --region region --upper video_spend,audio_spend " +
		"--search search_spend --queries branded_queries --outcome conversions --controls price --seed 11 --out " + dir
	f := fx.Fit
	f.Run.Spec, f.Run.Command = spec, fx.Command
	f.Data = &fitfolder.Data{Dataset: &data.Dataset{Spec: spec, File: "data.csv", Weeks: fx.Weeks, Regions: regions}}

	// Effect allocation: per region, channel and path a multiplier of how
	// well the channel works there, and per draw a wobble that is larger
	// in small regions; normalised over regions in every draw.
	n := len(fx.Draws[fitfolder.DrawKey{Channel: Upper[0], Path: fitfolder.PathDirect, Window: "all"}])
	alloc := map[fitfolder.DrawKey][][]float64{} // [region][draw], Window unused
	for _, ch := range slices.Concat(Upper, Search) {
		for _, p := range []string{fitfolder.PathDirect, fitfolder.PathViaSearch} {
			a := make([][]float64, G)
			m := make([]float64, G)
			for g := range m {
				sd := 0.2
				if p == fitfolder.PathViaSearch {
					sd = 0.3
				}
				m[g] = spendShare[ch][g] * math.Exp(sd*rng.NormFloat64())
				if g == 1 && ch == "video_spend" && p == fitfolder.PathViaSearch {
					// far above the others whatever the draws: about
					// +20 points of share via search
					m[g] = spendShare[ch][g] * 3
				}
			}
			for g := range a {
				a[g] = make([]float64, n)
				wobble := 0.05 / math.Sqrt(size[g]*float64(G))
				for d := range n {
					a[g][d] = m[g] * math.Exp(wobble*rng.NormFloat64())
				}
			}
			for d := range n {
				sum := 0.0
				for g := range a {
					sum += a[g][d]
				}
				for g := range a {
					a[g][d] /= sum
				}
			}
			alloc[fitfolder.DrawKey{Channel: ch, Path: p}] = a
		}
	}

	// Per-region results and the pooled one, as the split makes them.
	results := make([]*mediation.Result, G)
	pooled := &mediation.Result{}
	for g, name := range pn.Regions {
		r := &mediation.Result{}
		rd := map[fitfolder.DrawKey][]float64{}
		rs := map[fitfolder.DrawKey]float64{}
		for _, wn := range fx.Windows {
			w, _ := window.Parse(wn)
			for _, ch := range Upper {
				spend := sumIn(fx.Weeks, f.Data.Regions[g].Upper[slices.Index(Upper, ch)], w)
				var es [2][]float64
				for i, p := range []string{fitfolder.PathDirect, fitfolder.PathViaSearch} {
					nat := fx.Draws[fitfolder.DrawKey{Channel: ch, Path: p, Window: wn}]
					a := alloc[fitfolder.DrawKey{Channel: ch, Path: p}][g]
					es[i] = make([]float64, n)
					for d := range n {
						es[i][d] = nat[d] * a[d]
					}
				}
				tot, share := make([]float64, n), make([]float64, n)
				for d := range n {
					tot[d] = es[0][d] + es[1][d]
					share[d] = es[1][d] / tot[d]
				}
				for _, e := range []struct {
					path string
					x    []float64
				}{{fitfolder.PathDirect, es[0]}, {fitfolder.PathViaSearch, es[1]}, {fitfolder.PathTotal, tot}, {fitfolder.PathMediatedShare, share}} {
					r.Effects = append(r.Effects, mediation.Effect{Channel: ch, Path: e.path, Window: wn, Draws: e.x, Spend: spend})
					k := fitfolder.DrawKey{Channel: ch, Path: e.path, Window: wn}
					rd[k], rs[k] = e.x, spend
				}
			}
		}
		// paid search over the whole period: the controlled effect by the
		// direct allocation, the apparent one by the via-search one (the
		// borrowed part is demand the upper funnel created)
		for _, ch := range Search {
			ctl, app := make([]float64, n), make([]float64, n)
			nai, shr := make([]float64, n), make([]float64, n)
			ad := alloc[fitfolder.DrawKey{Channel: ch, Path: fitfolder.PathDirect}][g]
			av := alloc[fitfolder.DrawKey{Channel: ch, Path: fitfolder.PathViaSearch}][g]
			for d := range n {
				c, a := fx.BorrowedDraws["controlled"][d], fx.BorrowedDraws["apparent"][d]
				ctl[d] = c * ad[d]
				app[d] = ctl[d] + (a-c)*av[d]
				nai[d] = fx.BorrowedDraws["naive"][d] * (app[d] / a)
				shr[d] = (app[d] - ctl[d]) / app[d]
			}
			spend := sumIn(fx.Weeks, f.Data.Regions[g].Search[slices.Index(Search, ch)], window.Window{Name: "all", Kind: window.WholePeriod})
			for _, e := range []struct {
				path string
				x    []float64
			}{{"controlled", ctl}, {"apparent", app}, {"naive", nai}, {"borrowed_share", shr}} {
				r.Borrowed = append(r.Borrowed, mediation.Effect{Channel: ch, Path: e.path, Window: "all", Draws: e.x, Spend: spend})
			}
		}
		results[g] = r
		pn.RegionDraws[name], pn.RegionSpend[name] = rd, rs
	}
	for _, wn := range fx.Windows {
		w, _ := window.Parse(wn)
		for _, ch := range Upper {
			spend := sumIn(fx.Weeks, fx.Columns[ch], w)
			via := fx.Draws[fitfolder.DrawKey{Channel: ch, Path: fitfolder.PathViaSearch, Window: wn}]
			tot := fx.Draws[fitfolder.DrawKey{Channel: ch, Path: fitfolder.PathTotal, Window: wn}]
			share := make([]float64, n)
			for d := range n {
				share[d] = via[d] / tot[d]
			}
			pooled.Effects = append(pooled.Effects,
				mediation.Effect{Channel: ch, Path: fitfolder.PathViaSearch, Window: wn, Draws: via, Spend: spend},
				mediation.Effect{Channel: ch, Path: fitfolder.PathTotal, Window: wn, Draws: tot, Spend: spend},
				mediation.Effect{Channel: ch, Path: fitfolder.PathMediatedShare, Window: wn, Draws: share, Spend: spend})
		}
	}
	f.RegionEffects = mediation.RegionEffectsTable(pn.Regions, results)
	f.RegionBorrowed = mediation.RegionBorrowedTable(pn.Regions, results)
	if f.RegionDifferences, err = mediation.RegionDifferences(pn.Regions, results, pooled); err != nil {
		return nil, err
	}

	// Region spread parameters in the summaries.
	spread := map[string][]string{
		"demand":  {"tau_mu_q", "tau_alpha[video_spend]", "tau_alpha[audio_spend]"},
		"outcome": {"tau_mu_y", "tau_gamma", "tau_beta[search_spend]", "tau_delta[video_spend]", "tau_delta[audio_spend]"},
	}
	for _, st := range f.Stages {
		for _, name := range spread[st.Name] {
			m := 0.05 + 0.25*rng.Float64()
			sd := 0.3 * m
			st.Params = append(st.Params, fitfolder.Param{Name: name, Mean: m, SD: sd, Q05: m - 1.5*sd, Q50: m, Q95: m + 1.7*sd,
				Rhat: 1 + 0.005*rng.Float64(), ESSBulk: math.Round(600 + 1500*rng.Float64()), ESSTail: math.Round(500 + 1500*rng.Float64()),
				MCSEMean: sd / 30})
		}
		fx.Params[st.Name] = st.Params
		st.Draws = drawsOf(st.Params)
	}
	if err := f.Write(dir); err != nil {
		return nil, err
	}
	return pn, nil
}

// seed is the fixture's seed as Write resolved it.
func (fx *Fixture) seed(o Options) uint64 {
	if o.Seed == 0 {
		return 1
	}
	return o.Seed
}

// regionNames returns n invented region names.
func regionNames(n int) []string {
	first := []string{"Alder", "Brook", "Cinder", "Dun", "Elm", "Fern", "Glen", "Hollow", "Iver", "Juniper"}
	second := []string{"vale", "mere", "gate", "ford", "moor", "reach", "wick", "field"}
	out := make([]string, n)
	for i := range out {
		out[i] = first[i%len(first)] + second[(i/len(first)+3*i)%len(second)]
		if i >= len(first)*len(second) {
			out[i] += fmt.Sprint(i)
		}
	}
	return out
}

func norm(v []float64) {
	s := 0.0
	for _, x := range v {
		s += x
	}
	for i := range v {
		v[i] /= s
	}
}

func scaled(v []float64, k float64) []float64 {
	out := make([]float64, len(v))
	for i, x := range v {
		out[i] = x * k
	}
	return out
}
