package model

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"regexp"
	"strconv"
	"strings"
	"unicode/utf8"

	"spillway/funnel/table"
)

// PriorError is a bad line of a priors file.
type PriorError struct {
	File         string
	Line, Column int
	Err          error
}

func (e *PriorError) Error() string {
	if e.Column > 0 {
		return fmt.Sprintf("%s:%d:%d: %v", e.File, e.Line, e.Column, e.Err)
	}
	return fmt.Sprintf("%s:%d: %v", e.File, e.Line, e.Err)
}

func (e *PriorError) Unwrap() error { return e.Err }

// PriorCheck says whether the model has a parameter called name and, if
// so, whether prior p fits it; which is what is at fault: 0 the family, 1
// p1, 2 p2 (Stage.CheckPrior is one).
type PriorCheck func(name string, p Prior) (has bool, which int, err error)

// PriorFile is what a priors file says: priors by parameter name, and
// stated priors on channels' returns (retprior.go).
type PriorFile struct {
	Priors  map[string]Prior
	Returns []*ReturnPrior
}

// LoadPriors reads a priors file of parameter rows only (LoadPriorFile
// without the data, so a return row is an error).
func LoadPriors(path string, check PriorCheck) (map[string]Prior, error) {
	f, err := LoadPriorFile(path, check, nil)
	if err != nil {
		return nil, err
	}
	return f.Priors, nil
}

// LoadPriorFile reads a priors file: CSV with the header
// parameter,family,p1,p2 (or parameter,family,p1,p2,window,per) and one
// row per overridden parameter, e.g. "K[video_spend],gamma,2,2", or per
// stated return, e.g. "return[video_spend],lognormal90,0.5,3,2025Q3,1000"
// (video returns 0.5 to 3 conversions per thousand spent in 2025Q3, a 90%
// range). A family takes as many numbers as Family.Arity says, the rest
// left empty; window and per are for return rows only. check says whether
// a parameter exists in some stage and whether the prior fits it; sc is
// the data a return row is resolved against (nil: return rows are an
// error). Unknown names, duplicates, bad families, missing, extra or bad
// numbers, priors that do not fit their parameter and returns that do not
// fit the data are *PriorError values naming the line and the column at
// fault.
func LoadPriorFile(path string, check PriorCheck, sc *Scaled) (*PriorFile, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadPriorFile(f, path, check, sc)
}

// priorRow is one line of a priors file.
type priorRow struct {
	Parameter string     `csv:"parameter"`
	Family    string     `csv:"family"`
	P1        priorParam `csv:"p1"`
	P2        priorParam `csv:"p2"`
}

// returnRow is one line of a priors file with the return columns.
type returnRow struct {
	Parameter string     `csv:"parameter"`
	Family    string     `csv:"family"`
	P1        priorParam `csv:"p1"`
	P2        priorParam `csv:"p2"`
	Window    string     `csv:"window"`
	Per       priorParam `csv:"per"`
}

// priorParam is p1 or p2: a number, or an empty cell (set false) for a
// family that takes fewer numbers.
type priorParam struct {
	v   float64
	set bool
}

func (p *priorParam) UnmarshalCSV(s string) error {
	s = strings.TrimSpace(s)
	if s == "" {
		*p = priorParam{}
		return nil
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return fmt.Errorf("%q is not a number", excerpt(s))
	}
	*p = priorParam{v: v, set: true}
	return nil
}

// excerpt shortens a cell quoted in a message to at most 40 bytes.
func excerpt(s string) string {
	if len(s) <= 40 {
		return s
	}
	cut := 37
	for cut > 0 && !utf8.RuneStart(s[cut]) {
		cut--
	}
	return s[:cut] + "..."
}

// priorColumn is the file column of prior number which (0 the family).
func priorColumn(which int) int { return 2 + which }

// returnName matches a return row's parameter: the measure, the path and
// the channel.
var returnName = regexp.MustCompile(`^(return|incremental)(_via_search|_direct)?\[(.+)\]$`)

// ReadPriors is LoadPriors on a reader; file names the source in errors.
func ReadPriors(r io.Reader, file string, check PriorCheck) (map[string]Prior, error) {
	f, err := ReadPriorFile(r, file, check, nil)
	if err != nil {
		return nil, err
	}
	return f.Priors, nil
}

// wideHeader reports whether the table's header has the return columns
// (six fields); a header it cannot read is left to table.Read.
func wideHeader(b []byte) bool {
	b = bytes.TrimPrefix(b, []byte("\ufeff"))
	rec, err := csv.NewReader(bytes.NewReader(b)).Read()
	return err == nil && len(rec) == 6
}

// ReadPriorFile is LoadPriorFile on a reader; file names the source in
// errors.
func ReadPriorFile(r io.Reader, file string, check PriorCheck, sc *Scaled) (*PriorFile, error) {
	b, err := io.ReadAll(r)
	if err != nil {
		return nil, &PriorError{File: file, Line: 1, Err: err}
	}
	var rows []returnRow
	var lines []int
	if wideHeader(b) {
		lines, err = table.Read(bytes.NewReader(b), file, &rows, table.Options{Exact: true})
	} else {
		var narrow []priorRow
		lines, err = table.Read(bytes.NewReader(b), file, &narrow, table.Options{Exact: true})
		for _, n := range narrow {
			rows = append(rows, returnRow{Parameter: n.Parameter, Family: n.Family, P1: n.P1, P2: n.P2})
		}
	}
	if err != nil {
		var te *table.Error
		if !errors.As(err, &te) {
			return nil, &PriorError{File: file, Line: 1, Err: err}
		}
		pe := &PriorError{File: file, Line: max(te.Line, 1), Column: te.Col, Err: te.Err}
		if te.Line > 1 && te.Column != "" {
			pe.Err = fmt.Errorf("%s %w", te.Column, te.Err) // p1 "zero" is not a number
		}
		return nil, pe
	}
	out := &PriorFile{Priors: map[string]Prior{}}
	seen := map[string]int{}
	for i, row := range rows {
		line, name := lines[i], strings.TrimSpace(row.Parameter)
		at := func(col int, format string, args ...any) error {
			return &PriorError{File: file, Line: line, Column: col, Err: fmt.Errorf(format, args...)}
		}
		p := Prior{Family: Family(strings.ToLower(strings.TrimSpace(row.Family))), P1: row.P1.v, P2: row.P2.v}
		if m := returnName.FindStringSubmatch(name); m != nil {
			if prev, ok := seen[name]; ok {
				return nil, at(1, "%s already has a prior on line %d", name, prev)
			}
			seen[name] = line
			r, err := readReturn(m, row, p, sc)
			if err != nil {
				return nil, at(err.which, "%s: %v", name, err.err)
			}
			r.Line = line
			out.Returns = append(out.Returns, r)
			continue
		}
		has, _, _ := check(name, p)
		if !has {
			return nil, at(1, "no parameter named %q in the model (names look like alpha[video_spend], K2[audio_spend], gamma, sigma_q; a return looks like return[video_spend])", excerpt(name))
		}
		if prev, ok := seen[name]; ok {
			return nil, at(1, "parameter %s already has a prior on line %d", name, prev)
		}
		seen[name] = line
		switch {
		case strings.TrimSpace(row.Window) != "":
			return nil, at(5, "%s: window is for a return row (return[...] or incremental[...]); leave it empty", name)
		case row.Per.set:
			return nil, at(6, "%s: per is for a return row (return[...]); leave it empty", name)
		case p.Family == LogNormal90 || p.Family == LogNormal:
			return nil, at(2, "%s: %s is for a return row (return[...] or incremental[...]); a parameter takes normal, halfnormal, gamma, invgamma, beta, studentt, flat, jeffreys or fixed", name, p.Family)
		}
		n := p.Family.Arity()
		if n < 0 || p.Family == Conditional {
			return nil, at(2, "%s: unknown family %q; expected normal, halfnormal, gamma, beta, flat, jeffreys or fixed", name, excerpt(string(p.Family)))
		}
		for k, q := range []priorParam{row.P1, row.P2} {
			switch {
			case k < n && !q.set:
				return nil, at(priorColumn(k+1), "%s: %s takes %s; p%d is empty", name, p.Family, arityWords(n), k+1)
			case k >= n && q.set:
				return nil, at(priorColumn(k+1), "%s: %s takes %s; leave p%d empty (it would be ignored)", name, p.Family, arityWords(n), k+1)
			}
		}
		if _, which, err := check(name, p); err != nil {
			return nil, at(priorColumn(which), "%v", strings.TrimPrefix(err.Error(), "prior for "))
		}
		out.Priors[name] = p
	}
	if err := checkCovers(out, seen, file); err != nil {
		return nil, err
	}
	return out, nil
}

// locErr is an error at a column of a return row.
type locErr struct {
	which int
	err   error
}

// readReturn turns a return row into a ReturnPrior against sc.
func readReturn(m []string, row returnRow, p Prior, sc *Scaled) (*ReturnPrior, *locErr) {
	bad := func(col int, f string, args ...any) *locErr { return &locErr{col, fmt.Errorf(f, args...)} }
	measure := ReturnOnSpend
	if m[1] == "incremental" {
		measure = Incremental
	}
	path := ReturnTotal
	switch m[2] {
	case "_via_search":
		path = ReturnViaSearch
	case "_direct":
		path = ReturnDirect
	}
	if p.Family != LogNormal90 && p.Family != LogNormal {
		return nil, bad(2, "a return takes family lognormal90 (p1, p2 its 5%% and 95%% quantiles) or lognormal (p1, p2 its mean and sd), not %q", excerpt(string(p.Family)))
	}
	for k, q := range []priorParam{row.P1, row.P2} {
		if !q.set {
			return nil, bad(priorColumn(k+1), "%s takes two numbers, p1 and p2; p%d is empty", p.Family, k+1)
		}
	}
	win := strings.TrimSpace(row.Window)
	if win == "" {
		win = "all"
	}
	per := 1.0
	if row.Per.set {
		if measure == Incremental {
			return nil, bad(6, "per applies to a return on spend (return[...]); an incremental outcome is in the outcome's units: leave it empty")
		}
		per = row.Per.v
	}
	if sc == nil {
		return nil, bad(1, "a return prior needs the data to resolve its channel and window")
	}
	r, which, err := NewReturnPrior(sc, m[3], path, measure, win, per, p)
	if err != nil {
		return nil, &locErr{which, err}
	}
	return r, nil
}

// checkCovers rejects two priors on one coefficient: a return prior and
// the coefficient's own row, or two return priors covering it.
func checkCovers(f *PriorFile, seen map[string]int, file string) error {
	owner := map[string]*ReturnPrior{}
	for _, r := range f.Returns {
		for _, c := range []struct {
			demand bool
			coef   string
		}{{true, "alpha"}, {false, "delta"}} {
			if !r.covers(c.demand) {
				continue
			}
			name := c.coef + "[" + r.Column + "]"
			at := func(format string, args ...any) error {
				return &PriorError{File: file, Line: r.Line, Column: 1, Err: fmt.Errorf(format, args...)}
			}
			if line, ok := seen[name]; ok {
				return at("%s sets the prior of %s, which has its own prior on line %d: keep one", r.Name(), name, line)
			}
			if o, ok := owner[name]; ok {
				return at("%s and %s on line %d both set the prior of %s: state the total, or each path once", r.Name(), o.Name(), o.Line, name)
			}
			owner[name] = r
		}
	}
	return nil
}

// arityWords says how many numbers a family takes.
func arityWords(n int) string {
	switch n {
	case 0:
		return "no numbers"
	case 1:
		return "one number, p1"
	}
	return "two numbers, p1 and p2"
}
