package model

import (
	"errors"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"

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

// LoadPriors reads a priors file: CSV with the header parameter,family,p1,p2
// and one row per overridden parameter, e.g. "K[video_spend],gamma,2,2".
// known reports whether a parameter name exists in some stage; unknown names,
// duplicates, bad families and bad numbers are errors naming the line and
// column.
func LoadPriors(path string, known func(string) bool) (map[string]Prior, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadPriors(f, path, known)
}

// priorRow is one line of a priors file.
type priorRow struct {
	Parameter string     `csv:"parameter"`
	Family    string     `csv:"family"`
	P1        priorParam `csv:"p1"`
	P2        priorParam `csv:"p2"`
}

// priorParam is p1 or p2: a number, or an empty cell for a family that
// needs fewer parameters.
type priorParam float64

func (p *priorParam) UnmarshalCSV(s string) error {
	if s == "" {
		*p = 0
		return nil
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return fmt.Errorf("%q is not a number", s)
	}
	*p = priorParam(v)
	return nil
}

// ReadPriors is LoadPriors on a reader; file names the source in errors.
func ReadPriors(r io.Reader, file string, known func(string) bool) (map[string]Prior, error) {
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
		line, name := lines[i], row.Parameter
		if !known(name) {
			return nil, &PriorError{File: file, Line: line, Column: 1, Err: fmt.Errorf("no parameter named %q in the model (names look like alpha[video_spend], K2[audio_spend], gamma, sigma_q)", name)}
		}
		if prev, ok := seen[name]; ok {
			return nil, &PriorError{File: file, Line: line, Column: 1, Err: fmt.Errorf("parameter %s already has a prior on line %d", name, prev)}
		}
		seen[name] = line
		p := Prior{Family: Family(strings.ToLower(row.Family)), P1: float64(row.P1), P2: float64(row.P2)}
		if err := p.Check(); err != nil {
			return nil, &PriorError{File: file, Line: line, Column: 2, Err: fmt.Errorf("%s: %v", name, err)}
		}
		out[name] = p
	}
	return out, nil
}
