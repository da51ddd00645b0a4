package validate

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"

	"spillway/funnel/data"
)

// Format is the manifest's format tag.
const Format = "spillway-validate-1"

// Manifest describes a sweep: what it validated, with which settings, and
// which of its jobs a folder holds. Shards of one sweep have equal
// manifests apart from Shard, Ran and Reference.
type Manifest struct {
	Format string `json:"format"`
	Tool   string `json:"tool"`
	// Data fingerprints the weekly series and roles (SHA-256).
	Data  string    `json:"data"`
	Spec  data.Spec `json:"spec"`
	Weeks int       `json:"weeks"`
	First string    `json:"first_week"`
	// Options describes the model options.
	Options  string   `json:"options"`
	Settings Settings `json:"settings"`
	// Generator says what the recovery check simulates from.
	Generator string `json:"generator,omitempty"`
	// ReferenceSource is "fitted" (with the sweep's settings) or "given".
	ReferenceSource string `json:"reference_source,omitempty"`
	// Reference fingerprints the reference fit's draws; empty in a shard
	// that did not need it.
	Reference string `json:"reference,omitempty"`
	// Regions names a region panel's regions (panel.go); empty for a
	// national sweep.
	Regions []string `json:"regions,omitempty"`
	// Jobs lists every job of the sweep.
	Jobs []Job `json:"jobs"`
	// Skipped lists quarters the stability check could not leave out, and
	// holdout origins and placebos a stated return prior rules out.
	Skipped []string `json:"skipped,omitempty"`
	// Shard is "i/n" for a shard, empty for a whole sweep.
	Shard string `json:"shard,omitempty"`
	// Ran lists the jobs whose records the folder holds.
	Ran []int `json:"ran"`
}

func (sw *Sweep) newManifest() Manifest {
	spec := sw.in.Spec
	spec.Data = "" // the path may differ between machines; Data fingerprints the content
	m := Manifest{Format: Format, Tool: sw.in.Tool, Data: seriesID(sw.in.Series, sw.in.Spec), Spec: spec,
		Weeks: len(sw.in.Series.Weeks), First: sw.in.Series.Weeks[0].Format(data.DateLayout),
		Options: optionsID(sw.in.Options) + liftsID(sw.in.Lifts), Settings: sw.set, Jobs: sw.Jobs(), Skipped: sw.skipped}
	if sw.gen != nil {
		m.Generator = sw.gen.name
	}
	if sw.pan != nil {
		m.Regions = sw.pan.ps.Regions
		m.Data = panelID(sw.pan.ds)
	}
	if sw.needsReference() {
		m.ReferenceSource = "fitted"
		if sw.in.Reference != nil {
			m.ReferenceSource = "given"
		}
	}
	return m
}

// Manifest returns the sweep's manifest (Shard, Ran and Reference empty).
func (sw *Sweep) Manifest() Manifest { return sw.manifest }

// Results are the records of some or all jobs of a sweep.
type Results struct {
	Manifest Manifest
	Records  []Record
}

// Complete reports whether r holds every job of its sweep.
func (r *Results) Complete() bool {
	return len(r.Manifest.Ran) == len(r.Manifest.Jobs) && r.Manifest.Shard == ""
}

// WriteManifest writes the manifest as indented JSON.
func (r *Results) WriteManifest(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(r.Manifest)
}

// jobsHeader is the header of jobs.csv.
var jobsHeader = []string{"job", "kind", "name", "path", "window", "stat", "value", "region"}

// WriteJobs writes the records as CSV with the columns
// job,kind,name,path,window,stat,value,region (region empty but for a
// region panel's per-region numbers), numbers in the shortest form that
// reads back exactly.
func (r *Results) WriteJobs(w io.Writer) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(jobsHeader); err != nil {
		return err
	}
	for _, rec := range r.Records {
		if err := cw.Write([]string{strconv.Itoa(rec.Job), rec.Kind, rec.Name, rec.Path, rec.Window, rec.Stat,
			strconv.FormatFloat(rec.Value, 'g', -1, 64), rec.Region}); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// ReadResults reads a folder's manifest.json and jobs.csv (from manifest
// and jobs); name, the folder's name, goes into error messages.
func ReadResults(manifest, jobs io.Reader, name string) (*Results, error) {
	r := &Results{}
	b, err := io.ReadAll(manifest)
	if err != nil {
		return nil, err
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&r.Manifest); err != nil {
		return nil, fmt.Errorf("%s/manifest.json: %w", name, err)
	}
	if r.Manifest.Format != Format {
		return nil, fmt.Errorf("%s/manifest.json: format %q, expected %q (a folder written by spillway validate)", name, r.Manifest.Format, Format)
	}
	cr := csv.NewReader(jobs)
	head, err := cr.Read()
	if err != nil {
		return nil, fmt.Errorf("%s/jobs.csv: %w", name, err)
	}
	// a folder written before region panels has no region column
	if !slices.Equal(head, jobsHeader) && !slices.Equal(head, jobsHeader[:len(jobsHeader)-1]) {
		return nil, fmt.Errorf("%s/jobs.csv: header %s, expected %s", name, strings.Join(head, ","), strings.Join(jobsHeader, ","))
	}
	ran := map[int]bool{}
	for _, j := range r.Manifest.Ran {
		ran[j] = true
	}
	for line := 2; ; line++ {
		row, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("%s/jobs.csv: %w", name, err)
		}
		job, err1 := strconv.Atoi(row[0])
		v, err2 := strconv.ParseFloat(row[6], 64)
		if err1 != nil || err2 != nil {
			return nil, fmt.Errorf("%s/jobs.csv line %d: expected a job number and a value, got %q and %q", name, line, row[0], row[6])
		}
		if !ran[job] {
			return nil, fmt.Errorf("%s/jobs.csv line %d: job %d is not listed as run in manifest.json", name, line, job)
		}
		rec := Record{Job: job, Kind: row[1], Name: row[2], Path: row[3], Window: row[4], Stat: row[5], Value: v}
		if len(row) > 7 {
			rec.Region = row[7]
		}
		r.Records = append(r.Records, rec)
	}
	return r, nil
}

// Merge joins the results of the shards of one sweep into the results of
// the whole sweep. The shards must share everything but Shard, Ran and
// Reference, agree on the reference fit where they fitted it, and hold
// every job exactly once; parts may come in any order.
func Merge(parts []*Results, names []string) (*Results, error) {
	if len(parts) == 0 {
		return nil, errors.New("validate: nothing to merge")
	}
	if len(names) != len(parts) {
		panic("validate: Merge needs one name per part")
	}
	key := func(m Manifest) ([]byte, error) {
		m.Shard, m.Ran, m.Reference = "", nil, ""
		return json.Marshal(m)
	}
	k0, err := key(parts[0].Manifest)
	if err != nil {
		return nil, err
	}
	owner := map[int]string{}
	out := &Results{Manifest: parts[0].Manifest}
	out.Manifest.Shard, out.Manifest.Ran, out.Manifest.Reference = "", nil, ""
	refFrom := ""
	for p, r := range parts {
		k, err := key(r.Manifest)
		if err != nil {
			return nil, err
		}
		if !bytes.Equal(k, k0) {
			return nil, fmt.Errorf("validate: %s and %s come from different sweeps (%s); merge shards of one sweep only", names[0], names[p], manifestDiff(parts[0].Manifest, r.Manifest))
		}
		if ref := r.Manifest.Reference; ref != "" {
			if out.Manifest.Reference != "" && ref != out.Manifest.Reference {
				return nil, fmt.Errorf("validate: %s and %s used different reference fits", refFrom, names[p])
			}
			out.Manifest.Reference, refFrom = ref, names[p]
		}
		for _, j := range r.Manifest.Ran {
			if prev, ok := owner[j]; ok {
				return nil, fmt.Errorf("validate: job %d is in both %s and %s", j, prev, names[p])
			}
			owner[j] = names[p]
		}
	}
	var missing []string
	for _, j := range out.Manifest.Jobs {
		if _, ok := owner[j.Index]; !ok {
			missing = append(missing, fmt.Sprintf("%d (%s)", j.Index, j.Label))
		}
	}
	if len(missing) > 0 {
		return nil, fmt.Errorf("validate: %d of %d jobs are missing: %s; merge every shard's folder", len(missing), len(out.Manifest.Jobs), strings.Join(missing, ", "))
	}
	for _, j := range out.Manifest.Jobs {
		out.Manifest.Ran = append(out.Manifest.Ran, j.Index)
	}
	if len(owner) != len(out.Manifest.Jobs) {
		return nil, errors.New("validate: the shards hold jobs the sweep does not have")
	}
	// records in job order, each job's records in the order it wrote them
	byJob := map[int][]Record{}
	for _, r := range parts {
		for _, rec := range r.Records {
			byJob[rec.Job] = append(byJob[rec.Job], rec)
		}
	}
	for _, j := range out.Manifest.Jobs {
		out.Records = append(out.Records, byJob[j.Index]...)
	}
	return out, nil
}

// manifestDiff names the first top-level field where a and b differ.
func manifestDiff(a, b Manifest) string {
	var ma, mb map[string]json.RawMessage
	ja, _ := json.Marshal(a)
	jb, _ := json.Marshal(b)
	_ = json.Unmarshal(ja, &ma)
	_ = json.Unmarshal(jb, &mb)
	for _, k := range []string{"format", "tool", "data", "spec", "weeks", "first_week", "options", "settings", "generator", "reference_source", "regions", "jobs", "skipped"} {
		if !bytes.Equal(ma[k], mb[k]) {
			if k == "data" {
				return "the data differ"
			}
			return fmt.Sprintf("%s differs: %s vs %s", k, ma[k], mb[k])
		}
	}
	return "manifests differ"
}
