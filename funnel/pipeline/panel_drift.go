package pipeline

import (
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
)

// panelDriftPaths returns every drifting coefficient's weekly multipliers
// on a region panel, read from each draw's base part: the multiplier is
// one for every region (model.PanelStages), so the national summaries
// apply unchanged.
func (f *PanelFitted) panelDriftPaths() []driftPath {
	st := [2]*model.Stage{f.Panels[0].Stages[0], f.Panels[1].Stages[0]}
	return driftPathsOf(f.Data.Scaled[0], st, [2]*mcmc.Fit{f.Fits[0], f.Fits[1]})
}

// Drifts returns every drifting coefficient's weekly multiplier, shared by
// the regions, as Fitted.Drifts; nil when nothing drifts.
func (f *PanelFitted) Drifts() []DriftWeek {
	return drifts(f.panelDriftPaths(), f.Data.Scaled[0])
}

// DriftChanges returns how each drifting coefficient's effectiveness, shared
// by the regions, moved between the first and the last full quarter, as
// Fitted.DriftChanges.
func (f *PanelFitted) DriftChanges() []DriftChange {
	return driftChanges(f.panelDriftPaths(), f.Data.Scaled[0].Weeks)
}
