package main

import (
	"strings"

	"github.com/spf13/pflag"

	"spillway/funnel/data"
)

// roleFlags are the flags that name the data file and the roles of its
// columns, shared by every command that reads data.
type roleFlags struct {
	spec     data.Spec // from the flags; spec-file values fill what is empty
	specFile string
	// exposure, breaks and errors are the --exposure SPEND=COLUMN,
	// --exposure-break COLUMN=DATE and --exposure-error COLUMN=SD flags as
	// given (exposure.go)
	exposure, breaks, errors []string
	// reach and frequency are the --reach SPEND=COLUMN and --frequency
	// SPEND=COLUMN flags as given
	reach, frequency []string
}

// addFlags adds --data --date --region --population --upper --search
// --queries --outcome --controls --spec to fs, bound to r.
func (r *roleFlags) addFlags(fs *pflag.FlagSet) {
	fs.StringVar(&r.spec.Data, "data", "", "the data `FILE`: CSV, one row per week (and region)")
	fs.StringVar(&r.spec.Date, "date", "", "the week start `COLUMN` (YYYY-MM-DD, consecutive weeks)")
	fs.StringVar(&r.spec.Region, "region", "", "the region `COLUMN` (leave out for national data)")
	fs.StringVar(&r.spec.Population, "population", "", "the region population `COLUMN` (optional)")
	fs.StringSliceVar(&r.spec.Upper, "upper", nil, "upper-funnel spend `COLUMNS`, comma-separated (video, audio)")
	fs.StringSliceVar(&r.spec.Search, "search", nil, "paid-search spend `COLUMNS`, comma-separated")
	fs.StringVar(&r.spec.Queries, "queries", "", "the branded query volume `COLUMN` (the mediator)")
	fs.StringVar(&r.spec.Outcome, "outcome", "", "the outcome `COLUMN` (conversions or revenue)")
	fs.StringSliceVar(&r.spec.Controls, "controls", nil, "control `COLUMNS`, comma-separated (price, promotion, holidays)")
	fs.StringVar(&r.specFile, "spec", "", "a JSON spec `FILE` naming the roles; the flags above override it")
	fs.StringArrayVar(&r.exposure, "exposure", nil, "`SPEND=COL`: the upper-funnel channel SPEND runs on the exposure COL (impressions, rating points); repeatable")
	fs.StringArrayVar(&r.breaks, "exposure-break", nil, "`COL=DATE`: the exposure of channel COL is measured a new way from the week DATE (YYYY-MM-DD) on; the model learns how the two compare; repeatable")
	fs.StringArrayVar(&r.reach, "reach", nil, "`SPEND=COL`: the upper-funnel channel SPEND runs on its weekly reach COL (people reached), with --frequency; repeatable")
	fs.StringArrayVar(&r.frequency, "frequency", nil, "`SPEND=COL`: the average frequency COL (exposures per person reached) of a channel given with --reach; repeatable")
	fs.StringArrayVar(&r.errors, "exposure-error", nil, "`COL=SD`: the exposure of channel COL is observed with multiplicative error of sd SD on the log scale (0.15 for about 15%); repeatable")
}

// given reports whether any role flag or a spec file was given (cmd run uses
// the demo scenario when none is).
func (r *roleFlags) given() bool {
	s := r.spec
	return r.specFile != "" || s.Data != "" || s.Date != "" || s.Region != "" || s.Population != "" ||
		len(s.Upper) > 0 || len(s.Search) > 0 || s.Queries != "" || s.Outcome != "" || len(s.Controls) > 0 ||
		len(r.exposure) > 0 || len(r.breaks) > 0 || len(r.errors) > 0 || len(r.reach) > 0 || len(r.frequency) > 0
}

// inputs returns the files the role flags read: the spec file and the
// data file (named by --data or by the spec file), for newOutDir to
// protect. A spec file that cannot be read adds nothing here; resolve
// reports it.
func (r *roleFlags) inputs() []string {
	files := []string{r.specFile, r.spec.Data}
	if r.spec.Data == "" && r.specFile != "" {
		if s, err := data.LoadSpec(r.specFile); err == nil {
			files = append(files, s.Data)
		}
	}
	return files
}

// resolve returns the spec to use: the spec file (if any) with the flags
// put over it, checked. Errors are bad data (exit status 2).
func (r *roleFlags) resolve() (data.Spec, error) {
	var spec data.Spec
	if r.specFile != "" {
		s, err := data.LoadSpec(r.specFile)
		if err != nil {
			return data.Spec{}, badData(err)
		}
		spec = s
	}
	flags := r.spec
	var err error
	if flags.Exposure, err = exposureFlags(r.exposure, "--exposure"); err != nil {
		return data.Spec{}, err
	}
	reach, err := exposureFlags(r.reach, "--reach")
	if err != nil {
		return data.Spec{}, err
	}
	flags.Exposure = append(flags.Exposure, reach...)
	spec = spec.Override(flags)
	if spec.Exposure, err = breakFlags(spec.Exposure, r.breaks); err != nil {
		return data.Spec{}, err
	}
	if spec.Exposure, err = errorFlags(spec.Exposure, r.errors); err != nil {
		return data.Spec{}, err
	}
	if spec.Exposure, err = frequencyFlags(spec.Exposure, r.frequency, reach); err != nil {
		return data.Spec{}, err
	}
	if spec.Data == "" {
		return data.Spec{}, usagef("no data file: name it with --data FILE (or \"data\" in the spec file)")
	}
	if err := missingRoles(spec); err != nil {
		return data.Spec{}, err
	}
	if err := spec.Validate(); err != nil {
		return data.Spec{}, badData(err)
	}
	return spec, nil
}

// missingRoles reports every required role that neither the flags nor
// the spec file name, at once, when more than one is missing (one alone
// is left to Spec.Validate's message).
func missingRoles(spec data.Spec) error {
	var missing []string
	for _, r := range []struct {
		empty     bool
		flag, key string
	}{
		{spec.Date == "", "--date COLUMN (week start)", "date"},
		{len(spec.Upper) == 0, "--upper COLUMNS (upper-funnel spend)", "upper"},
		{len(spec.Search) == 0, "--search COLUMNS (paid-search spend)", "search"},
		{spec.Queries == "", "--queries COLUMN (branded query volume)", "queries"},
		{spec.Outcome == "", "--outcome COLUMN (the outcome)", "outcome"},
	} {
		if r.empty {
			missing = append(missing, r.flag)
		}
	}
	if len(missing) < 2 {
		return nil
	}
	return usagef("%d roles are missing: %s; name each column with its flag (or its key in a --spec file)", len(missing), strings.Join(missing, ", "))
}

// load resolves the spec and loads and checks the data file. Errors are bad
// data (exit status 2) or usage errors.
func (r *roleFlags) load() (*data.Dataset, error) {
	spec, err := r.resolve()
	if err != nil {
		return nil, err
	}
	d, err := data.Load(spec.Data, spec)
	if err != nil {
		return nil, badData(err)
	}
	return d, nil
}
