package data

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"unicode/utf8"
)

// Spec declares which CSV columns play which role. Column names are the
// user's own; the JSON keys of a spec file are the tags below.
type Spec struct {
	// Data is the path of the CSV file (used by callers; Read ignores it).
	Data string `json:"data,omitempty"`
	// Date is the week-start column (YYYY-MM-DD). Required.
	Date string `json:"date"`
	// Region is the region column; empty for one national series.
	Region string `json:"region,omitempty"`
	// Population is the per-region population column (needs Region).
	Population string `json:"population,omitempty"`
	// Upper lists the upper-funnel spend columns (video, audio). At least one.
	Upper []string `json:"upper"`
	// Search lists the paid-search spend columns. At least one.
	Search []string `json:"search"`
	// Queries is the branded query volume column (the mediator). Required.
	Queries string `json:"queries"`
	// Outcome is the outcome column (conversions or revenue). Required.
	Outcome string `json:"outcome"`
	// Controls lists control columns (price, promotion, holidays); optional.
	Controls []string `json:"controls,omitempty"`
	// Exposure maps upper-funnel spend columns to the exposure columns
	// (impressions, rating points) their adstock and saturation run on
	// (exposure.go); optional. The spend column stays the channel's cost.
	Exposure []Exposure `json:"exposure,omitempty"`
}

// role is the part a column plays.
type role int

const (
	roleDate role = iota
	roleRegion
	rolePopulation
	roleUpper
	roleSearch
	roleQueries
	roleOutcome
	roleControl
	roleExposure
	roleFrequency
)

// roleInfo gives each role's flag, spec key and a plain description.
var roleInfo = [...]struct{ flag, key, what string }{
	roleDate:       {"--date", "date", "week start date"},
	roleRegion:     {"--region", "region", "region"},
	rolePopulation: {"--population", "population", "population"},
	roleUpper:      {"--upper", "upper", "upper-funnel spend"},
	roleSearch:     {"--search", "search", "paid-search spend"},
	roleQueries:    {"--queries", "queries", "branded query volume"},
	roleOutcome:    {"--outcome", "outcome", "outcome"},
	roleControl:    {"--controls", "controls", "control"},
	roleExposure:   {"--exposure", "exposure", "exposure"},
	roleFrequency:  {"--frequency", "frequency", "frequency"},
}

// column is one column the spec uses, in the canonical order of columns().
type column struct {
	name string
	role role
}

// columns returns the columns the spec names in canonical order: date,
// region, population, upper, search, queries, outcome, controls, then the
// exposure columns in the order of their spend columns in Upper. Empty
// names of optional roles are left out.
func (s Spec) columns() []column {
	var cs []column
	add := func(name string, r role) {
		if name != "" {
			cs = append(cs, column{name, r})
		}
	}
	add(s.Date, roleDate)
	add(s.Region, roleRegion)
	add(s.Population, rolePopulation)
	for _, n := range s.Upper {
		cs = append(cs, column{n, roleUpper})
	}
	for _, n := range s.Search {
		cs = append(cs, column{n, roleSearch})
	}
	add(s.Queries, roleQueries)
	add(s.Outcome, roleOutcome)
	for _, n := range s.Controls {
		cs = append(cs, column{n, roleControl})
	}
	for _, n := range s.exposureColumns() {
		cs = append(cs, column{n, roleExposure})
	}
	for _, n := range s.frequencyColumns() {
		cs = append(cs, column{n, roleFrequency})
	}
	return cs
}

// Columns returns the names of the columns the spec uses, in the order
// WriteCSV writes them: date, region, population, upper, search, queries,
// outcome, controls, exposure (absent optional roles left out).
func (s Spec) Columns() []string {
	cs := s.columns()
	names := make([]string, len(cs))
	for i, c := range cs {
		names[i] = c.name
	}
	return names
}

// Media returns the spend columns, upper-funnel first, then paid search.
func (s Spec) Media() []string {
	return append(append([]string(nil), s.Upper...), s.Search...)
}

// Override returns s with every non-empty field of flags (a non-empty string,
// a list with at least one entry) put in its place. s and flags are not
// modified.
func (s Spec) Override(flags Spec) Spec {
	str := func(dst *string, v string) {
		if v != "" {
			*dst = v
		}
	}
	list := func(dst *[]string, v []string) {
		if len(v) > 0 {
			*dst = append([]string(nil), v...)
		}
	}
	str(&s.Data, flags.Data)
	str(&s.Date, flags.Date)
	str(&s.Region, flags.Region)
	str(&s.Population, flags.Population)
	list(&s.Upper, flags.Upper)
	list(&s.Search, flags.Search)
	str(&s.Queries, flags.Queries)
	str(&s.Outcome, flags.Outcome)
	list(&s.Controls, flags.Controls)
	if len(flags.Exposure) > 0 {
		s.Exposure = append([]Exposure(nil), flags.Exposure...)
	}
	return s
}

// Validate reports whether the spec can be used: the date, upper-funnel,
// paid-search, queries and outcome roles are given, no name is empty, no
// column plays two roles (or appears twice in one list), and a population
// column comes with a region column. The error is a *DataError without a
// file, naming the flag to fix.
func (s Spec) Validate() error {
	fail := func(format string, args ...any) error {
		return &DataError{Err: fmt.Errorf(format, args...)}
	}
	need := func(r role) error {
		ri := roleInfo[r]
		return fail("no %s column: name it with %s (or %q in the spec file)", ri.what, ri.flag, ri.key)
	}
	switch {
	case s.Date == "":
		return need(roleDate)
	case len(s.Upper) == 0:
		return fail("no upper-funnel spend column: name one or more with --upper (or \"upper\" in the spec file)")
	case len(s.Search) == 0:
		return fail("no paid-search spend column: name one or more with --search (or \"search\" in the spec file)")
	case s.Queries == "":
		return need(roleQueries)
	case s.Outcome == "":
		return need(roleOutcome)
	case s.Population != "" && s.Region == "":
		return fail("--population %q needs --region: a population is given per region", s.Population)
	}
	seen := map[string]role{}
	for _, c := range s.columns() {
		name := strings.TrimSpace(c.name)
		flag := roleInfo[c.role].flag
		if name == "" {
			return fail("%s has an empty column name", flag)
		}
		if r, dup := seen[name]; dup {
			if r == c.role {
				return fail("column %q is listed twice in %s", name, flag)
			}
			return fail("column %q is given to both %s and %s; a column can play only one role", name, roleInfo[r].flag, flag)
		}
		seen[name] = c.role
	}
	return s.validateExposure()
}

// LoadSpec reads a JSON spec file: an object whose keys are those of Spec
// ("data", "date", "region", "population", "upper", "search", "queries",
// "outcome", "controls", "exposure"; exposure.go gives the last one's two
// forms). A list key also accepts a single string, and null
// means the key is absent. A relative "data" path is taken relative to the
// spec file's folder. Errors are *DataError values: an unknown or repeated key
// is named, and JSON syntax errors give FILE:LINE:COL.
func LoadSpec(path string) (Spec, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		var pe *fs.PathError
		if errors.As(err, &pe) {
			err = pe.Err
		}
		return Spec{}, &DataError{File: path, Err: fmt.Errorf("cannot read the spec file: %w", err)}
	}
	s, err := ParseSpec(b, path)
	if err != nil {
		return Spec{}, err
	}
	if s.Data != "" && !filepath.IsAbs(s.Data) {
		s.Data = filepath.Join(filepath.Dir(path), s.Data)
	}
	return s, nil
}

// specKeys lists the keys of a spec file, in Spec's order.
var specKeys = []string{"data", "date", "region", "population", "upper", "search", "queries", "outcome", "controls", "exposure"}

// ParseSpec parses the JSON text of a spec file; file names it in errors.
// Paths are returned as written. See LoadSpec for the format.
func ParseSpec(b []byte, file string) (Spec, error) {
	b = bytes.TrimPrefix(b, utf8BOM)
	var s Spec
	at := func(off int, format string, args ...any) error {
		line, col := lineCol(b, off)
		return errAt(file, line, col, "", format, args...)
	}
	if len(bytes.TrimSpace(b)) == 0 {
		return s, &DataError{File: file, Err: errors.New(`the spec file is empty; expected a JSON object like {"date": "week", "upper": ["video"], ...}`)}
	}
	// A whole-text parse first: its SyntaxError.Offset counts the bytes up
	// to and including the bad one (a Decoder's offsets after Token calls
	// are not reliable).
	var whole any
	if err := json.Unmarshal(b, &whole); err != nil {
		var se *json.SyntaxError
		if errors.As(err, &se) {
			if strings.Contains(se.Error(), "unexpected end") {
				return s, at(len(b), "unexpected end of file; the JSON text is not complete")
			}
			return s, at(max(int(se.Offset)-1, 0), "%s", strings.TrimPrefix(se.Error(), "json: "))
		}
	}
	dec := json.NewDecoder(bytes.NewReader(b))
	syntax := func(err error) error {
		var se *json.SyntaxError
		switch {
		case errors.As(err, &se):
			return at(int(se.Offset), "%s", strings.TrimPrefix(se.Error(), "json: "))
		case errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, io.EOF):
			return at(len(b), "unexpected end of file; the JSON object is not closed with }")
		}
		return &DataError{File: file, Err: err}
	}
	start := skipSpace(b, 0)
	tok, err := dec.Token()
	if err != nil {
		return s, syntax(err)
	}
	if d, ok := tok.(json.Delim); !ok || d != '{' {
		return s, at(start, `expected a JSON object like {"date": "week", ...}`)
	}
	fields := map[string]any{
		"data": &s.Data, "date": &s.Date, "region": &s.Region, "population": &s.Population,
		"upper": &s.Upper, "search": &s.Search, "queries": &s.Queries, "outcome": &s.Outcome,
		"controls": &s.Controls, "exposure": &s.Exposure,
	}
	seen := map[string]bool{}
	for dec.More() {
		keyOff := skipSpaceComma(b, int(dec.InputOffset()))
		tok, err := dec.Token()
		if err != nil {
			return s, syntax(err)
		}
		key, _ := tok.(string)
		dst, known := fields[key]
		if !known {
			hint := ""
			for _, k := range specKeys {
				if strings.EqualFold(k, key) {
					hint = fmt.Sprintf(" (did you mean %q?)", k)
				}
			}
			return s, at(keyOff, "unknown key %q%s; expected one of %s", key, hint, strings.Join(specKeys, ", "))
		}
		if seen[key] {
			return s, at(keyOff, "key %q appears twice", key)
		}
		seen[key] = true
		valOff := skipSpaceColon(b, int(dec.InputOffset()))
		var raw json.RawMessage
		if err := dec.Decode(&raw); err != nil {
			return s, syntax(err)
		}
		if bytes.Equal(raw, []byte("null")) {
			continue
		}
		switch p := dst.(type) {
		case *string:
			if err := json.Unmarshal(raw, p); err != nil {
				return s, at(valOff, "%q must be a column name in quotes, like \"video_spend\"; got %s", key, jsonKind(raw, false))
			}
		case *[]string:
			var one string
			if json.Unmarshal(raw, &one) == nil {
				*p = []string{one}
				break
			}
			if err := json.Unmarshal(raw, p); err != nil {
				return s, at(valOff, "%q must be a list of column names, like [\"video_spend\", \"audio_spend\"]; got %s", key, jsonKind(raw, true))
			}
		case *[]Exposure:
			e, msg := parseExposure(raw)
			if msg != "" {
				return s, at(valOff, "%s", msg)
			}
			*p = e
		}
	}
	if _, err := dec.Token(); err != nil { // the closing brace
		return s, syntax(err)
	}
	if off := skipSpace(b, int(dec.InputOffset())); off < len(b) {
		return s, at(off, "unexpected text after the JSON object")
	}
	return s, nil
}

// jsonKind names the kind of a JSON value for error messages; inList says
// a list was wanted (so a list found holds something other than names).
func jsonKind(raw []byte, inList bool) string {
	if len(raw) == 0 {
		return "nothing"
	}
	switch raw[0] {
	case '{':
		return "an object"
	case '[':
		if inList {
			return "a list holding something other than names in quotes"
		}
		return "a list"
	case '"':
		return "a string"
	case 't', 'f':
		return "true/false"
	}
	return "a number"
}

func skipSpace(b []byte, i int) int {
	for i < len(b) && (b[i] == ' ' || b[i] == '\t' || b[i] == '\n' || b[i] == '\r') {
		i++
	}
	return i
}

func skipSpaceComma(b []byte, i int) int {
	for i < len(b) && (b[i] == ' ' || b[i] == '\t' || b[i] == '\n' || b[i] == '\r' || b[i] == ',') {
		i++
	}
	return i
}

func skipSpaceColon(b []byte, i int) int {
	for i < len(b) && (b[i] == ' ' || b[i] == '\t' || b[i] == '\n' || b[i] == '\r' || b[i] == ':') {
		i++
	}
	return i
}

// lineCol converts a byte offset in b into a 1-based line and 1-based
// character column.
func lineCol(b []byte, off int) (line, col int) {
	if off > len(b) {
		off = len(b)
	}
	line = 1 + bytes.Count(b[:off], []byte("\n"))
	start := bytes.LastIndexByte(b[:off], '\n') + 1
	return line, utf8.RuneCount(b[start:off]) + 1
}
