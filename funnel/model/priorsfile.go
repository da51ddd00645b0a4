package model

import (
	"errors"
	"fmt"
	"io"
	"os"
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

// LoadPriors reads a priors file: CSV with the header parameter,family,p1,p2
// and one row per overridden parameter, e.g. "K[video_spend],gamma,2,2".
// A family takes as many numbers as Family.Arity says, the rest left empty.
// check says whether a parameter exists in some stage and whether the prior
// fits it. Unknown names, duplicates, bad families, missing, extra or bad
// numbers and priors that do not fit their parameter are *PriorError
// values naming the line and the column at fault.
func LoadPriors(path string, check PriorCheck) (map[string]Prior, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadPriors(f, path, check)
}

// priorRow is one line of a priors file.
type priorRow struct {
	Parameter string     `csv:"parameter"`
	Family    string     `csv:"family"`
	P1        priorParam `csv:"p1"`
	P2        priorParam `csv:"p2"`
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

// ReadPriors is LoadPriors on a reader; file names the source in errors.
func ReadPriors(r io.Reader, file string, check PriorCheck) (map[string]Prior, error) {
	var rows []priorRow
	lines, err := table.Read(r, file, &rows, table.Options{Exact: true})
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
	out := map[string]Prior{}
	seen := map[string]int{}
	for i, row := range rows {
		line, name := lines[i], strings.TrimSpace(row.Parameter)
		at := func(col int, format string, args ...any) error {
			return &PriorError{File: file, Line: line, Column: col, Err: fmt.Errorf(format, args...)}
		}
		p := Prior{Family: Family(strings.ToLower(strings.TrimSpace(row.Family))), P1: row.P1.v, P2: row.P2.v}
		has, _, _ := check(name, p)
		if !has {
			return nil, at(1, "no parameter named %q in the model (names look like alpha[video_spend], K2[audio_spend], gamma, sigma_q)", excerpt(name))
		}
		if prev, ok := seen[name]; ok {
			return nil, at(1, "parameter %s already has a prior on line %d", name, prev)
		}
		seen[name] = line
		n := p.Family.Arity()
		if n < 0 {
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
		out[name] = p
	}
	return out, nil
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
