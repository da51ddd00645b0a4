package scenario

import (
	"encoding/json"
	"fmt"
	"io"
	"math"

	"spillway/funnel/data"
	"spillway/funnel/model"
	"spillway/funnel/window"
	"spillway/mediation"
)

// Truth is what truth.json holds: the scenario, its true parameters in the
// fitted model's units, and the true effects computed from them by the same
// code that computes fitted effects (mediation.Split on a single draw).
type Truth struct {
	Scenario string             `json:"scenario"`
	Seed     uint64             `json:"seed"`
	Weeks    int                `json:"weeks"`
	Regions  int                `json:"regions"`
	Demand   map[string]float64 `json:"demand,omitempty"`
	Outcome  map[string]float64 `json:"outcome,omitempty"`
	// RegionTruth holds each region's parameters (regional scenarios).
	RegionTruth []Region `json:"region_truth,omitempty"`
	// Effects are per upper channel, path and window (outcome units; for
	// regional data, regions summed).
	Effects []TrueEffect `json:"effects"`
	// Borrowed are per search channel and window: controlled, apparent,
	// borrowed_share.
	Borrowed []TrueEffect `json:"borrowed"`
}

// TrueEffect is one true effect.
type TrueEffect struct {
	Channel      string  `json:"channel"`
	Path         string  `json:"path"`
	Window       string  `json:"window"`
	Value        float64 `json:"value"`
	PerUnitSpend float64 `json:"per_unit_spend,omitempty"`
}

// Truth computes the true effects of a simulated result.
func (s *Scenario) Truth(r *Result) (*Truth, error) {
	t := &Truth{Scenario: s.Name, Seed: s.Seed, Weeks: s.Weeks, Regions: s.Regions, Demand: r.Demand, Outcome: r.Outcome, RegionTruth: r.Regions}
	var parts []*mediation.Result
	for g, reg := range r.Data.Regions {
		dem, out := r.Demand, r.Outcome
		if s.Regions > 0 {
			dem, out = r.Regions[g].Demand, r.Regions[g].Outcome
		}
		res, err := TrueSplit(reg.Series, r.Data.Spec, dem, out)
		if err != nil {
			return nil, err
		}
		parts = append(parts, res)
	}
	// regions sum back in absolute units
	first := parts[0]
	for i, e := range first.Effects {
		if e.Path == "mediated_share" {
			continue
		}
		v, spend := 0.0, 0.0
		for _, p := range parts {
			v += p.Effects[i].Draws[0]
			spend += p.Effects[i].Spend
		}
		pu := 0.0 // a window without spend has no per-unit figure
		if spend > 0 {
			pu = v / spend
		}
		t.Effects = append(t.Effects, TrueEffect{Channel: e.Channel, Path: e.Path, Window: e.Window, Value: v, PerUnitSpend: pu})
		if e.Path == "total" && v != 0 {
			// a window in which the channel did nothing has no share
			via := t.Effects[len(t.Effects)-2].Value
			t.Effects = append(t.Effects, TrueEffect{Channel: e.Channel, Path: "mediated_share", Window: e.Window, Value: via / v})
		}
	}
	for i := 0; i < len(first.Borrowed); i += 3 {
		var ctl, app float64
		for _, p := range parts {
			ctl += p.Borrowed[i].Draws[0]
			app += p.Borrowed[i+1].Draws[0]
		}
		ch, win := first.Borrowed[i].Channel, first.Borrowed[i].Window
		t.Borrowed = append(t.Borrowed,
			TrueEffect{Channel: ch, Path: "controlled", Window: win, Value: ctl},
			TrueEffect{Channel: ch, Path: "apparent", Window: win, Value: app},
			TrueEffect{Channel: ch, Path: "borrowed_share", Window: win, Value: mediation.BorrowedShare(app, ctl)})
	}
	for _, e := range append(append([]TrueEffect(nil), t.Effects...), t.Borrowed...) {
		if math.IsNaN(e.Value) || math.IsInf(e.Value, 0) {
			return nil, fmt.Errorf("scenario: true %s %s of %s is %v", e.Path, e.Window, e.Channel, e.Value)
		}
	}
	return t, nil
}

// TrueSplit runs the effect computation on one series with known
// parameters (a single "draw").
func TrueSplit(s data.Series, spec data.Spec, dem, out map[string]float64) (*mediation.Result, error) {
	sc := model.Scale(s, spec)
	st1, err := model.Demand(sc, model.Options{})
	if err != nil {
		return nil, err
	}
	st2, err := model.Outcome(sc, model.Options{})
	if err != nil {
		return nil, err
	}
	d1, err := mediation.Point(st1.Names(), dem)
	if err != nil {
		return nil, err
	}
	d2, err := mediation.Point(st2.Names(), out)
	if err != nil {
		return nil, err
	}
	return mediation.Split(&mediation.Inputs{Data: sc, Demand: st1, Outcome: st2, DemandDraws: d1, OutcomeDraws: d2},
		window.Quarters(s.Weeks))
}

// WriteJSON writes t as indented JSON with sorted keys (maps are sorted by
// encoding/json), so the same truth gives the same bytes.
func (t *Truth) WriteJSON(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(t)
}
