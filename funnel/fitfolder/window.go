package fitfolder

import "spillway/funnel/window"

// Window resolves the window name for charts and the report. An empty name
// means DefaultWindow. The window is resolved against the data's weeks, so
// a WholePeriod window gets Start and End from the first and last week
// start. The error is a *WindowError when the name does not parse or
// effects.csv has no rows for it.
func (f *Fit) Window(name string) (window.Window, error) {
	if name == "" {
		name = f.DefaultWindow()
	}
	w, err := window.Parse(name)
	if err != nil {
		return window.Window{}, &WindowError{Window: name, Available: f.Windows(), Err: err}
	}
	if !f.HasWindow(w.Name) {
		return window.Window{}, &WindowError{Window: name, Available: f.Windows()}
	}
	return f.resolve(w), nil
}

// Whole returns the WholePeriod window resolved against the data.
func (f *Fit) Whole() window.Window {
	return f.resolve(window.Window{Name: "all", Kind: window.WholePeriod})
}

func (f *Fit) resolve(w window.Window) window.Window {
	if r, ok := w.In(f.Data.Weeks); ok {
		return r
	}
	return w
}

// FullQuarter reports whether the data holds every week that starts in
// quarter w: the week before the first one starts before the quarter and
// the week after the last one starts after it.
func (f *Fit) FullQuarter(w window.Window) bool {
	weeks := f.Data.Weeks
	if w.Kind != window.Quarter || len(weeks) == 0 {
		return false
	}
	first, last := weeks[0], weeks[len(weeks)-1]
	return first.AddDate(0, 0, -7).Before(w.Start) && last.AddDate(0, 0, 7).After(w.End)
}

// DefaultWindow returns the window a review looks at when none is asked
// for: the latest quarter of effects.csv that the data covers in full, or
// "all" when there is none.
func (f *Fit) DefaultWindow() string {
	best := window.Window{}
	found := false
	for _, name := range f.Windows() {
		w, err := window.Parse(name)
		if err != nil || w.Kind != window.Quarter || !f.FullQuarter(w) {
			continue
		}
		if !found || w.Start.After(best.Start) {
			best, found = w, true
		}
	}
	if !found {
		return "all"
	}
	return best.Name
}
