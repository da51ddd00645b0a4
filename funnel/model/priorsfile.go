package model

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
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

// ReadPriors is LoadPriors on a reader; file names the source in errors.
func ReadPriors(r io.Reader, file string, known func(string) bool) (map[string]Prior, error) {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	rows, err := cr.ReadAll()
	if err != nil {
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			return nil, &PriorError{File: file, Line: pe.Line, Column: pe.Column, Err: pe.Err}
		}
		return nil, &PriorError{File: file, Line: 1, Err: err}
	}
	if len(rows) == 0 {
		return nil, &PriorError{File: file, Line: 1, Err: errors.New("empty file; expected the header parameter,family,p1,p2")}
	}
	want := []string{"parameter", "family", "p1", "p2"}
	head := rows[0]
	if len(head) > 0 {
		head[0] = strings.TrimPrefix(head[0], "\ufeff")
	}
	if len(head) != 4 {
		return nil, &PriorError{File: file, Line: 1, Err: fmt.Errorf("header has %d columns; expected parameter,family,p1,p2", len(head))}
	}
	for i, h := range head {
		if strings.TrimSpace(h) != want[i] {
			return nil, &PriorError{File: file, Line: 1, Column: i + 1, Err: fmt.Errorf("header column %d is %q; expected %q", i+1, h, want[i])}
		}
	}
	out := map[string]Prior{}
	seen := map[string]int{}
	for i, row := range rows[1:] {
		line := i + 2
		if len(row) != 4 {
			return nil, &PriorError{File: file, Line: line, Err: fmt.Errorf("row has %d fields; expected 4 (parameter,family,p1,p2)", len(row))}
		}
		name := strings.TrimSpace(row[0])
		if !known(name) {
			return nil, &PriorError{File: file, Line: line, Column: 1, Err: fmt.Errorf("no parameter named %q in the model (names look like alpha[video_spend], K2[audio_spend], gamma, sigma_q)", name)}
		}
		if prev, ok := seen[name]; ok {
			return nil, &PriorError{File: file, Line: line, Column: 1, Err: fmt.Errorf("parameter %s already has a prior on line %d", name, prev)}
		}
		seen[name] = line
		p := Prior{Family: Family(strings.ToLower(strings.TrimSpace(row[1])))}
		for k, dst := range []*float64{&p.P1, &p.P2} {
			s := strings.TrimSpace(row[2+k])
			if s == "" {
				continue
			}
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				return nil, &PriorError{File: file, Line: line, Column: 3 + k, Err: fmt.Errorf("p%d %q is not a number", k+1, s)}
			}
			*dst = v
		}
		if err := p.Check(); err != nil {
			return nil, &PriorError{File: file, Line: line, Column: 2, Err: fmt.Errorf("%s: %v", name, err)}
		}
		out[name] = p
	}
	return out, nil
}
