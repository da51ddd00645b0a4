package mcmc

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"strconv"

	"gonum.org/v1/gonum/mat"
)

// Column names of the draws CSV index columns.
const (
	ChainColumn     = ".chain"
	IterationColumn = ".iteration"
	DrawColumn      = ".draw"
)

// formatFloat formats v so that strconv.ParseFloat returns v exactly;
// NaN and ±Inf are written as NaN, +Inf and -Inf.
func formatFloat(dst []byte, v float64) []byte {
	return strconv.AppendFloat(dst, v, 'g', -1, 64)
}

// WriteDraws writes the draws of f as tidy CSV: a header
// ".chain,.iteration,.draw" followed by f.Names, then one row per draw,
// chain-major. .chain and .iteration are 1-based (the iteration within its
// chain), .draw is 1-based over all chains, and every value is written with
// the shortest representation that parses back to the same float64.
func WriteDraws(w io.Writer, f *Fit) error {
	bw := bufio.NewWriter(w)
	cw := csv.NewWriter(bw)
	header := append([]string{ChainColumn, IterationColumn, DrawColumn}, f.Names...)
	if err := cw.Write(header); err != nil {
		return err
	}
	cw.Flush()
	var buf []byte
	draw := 0
	for c, ch := range f.Chains {
		rows, cols := ch.Draws.Dims()
		if cols != len(f.Names) {
			panic("mcmc: draws columns do not match names")
		}
		for i := 0; i < rows; i++ {
			draw++
			buf = buf[:0]
			buf = strconv.AppendInt(buf, int64(c+1), 10)
			buf = append(buf, ',')
			buf = strconv.AppendInt(buf, int64(i+1), 10)
			buf = append(buf, ',')
			buf = strconv.AppendInt(buf, int64(draw), 10)
			for j := 0; j < cols; j++ {
				buf = append(buf, ',')
				buf = formatFloat(buf, ch.Draws.At(i, j))
			}
			buf = append(buf, '\n')
			if _, err := bw.Write(buf); err != nil {
				return err
			}
		}
	}
	if err := cw.Error(); err != nil {
		return err
	}
	return bw.Flush()
}

// ParseError locates a problem in a draws CSV. Line is 1-based
// and counts the header; Column is the header name ("" for a whole-row
// problem).
type ParseError struct {
	Line   int
	Column string
	Err    error
}

func (e *ParseError) Error() string {
	if e.Column == "" {
		return fmt.Sprintf("mcmc: line %d: %v", e.Line, e.Err)
	}
	return fmt.Sprintf("mcmc: line %d, column %q: %v", e.Line, e.Column, e.Err)
}

func (e *ParseError) Unwrap() error { return e.Err }

// ReadDraws reads a draws CSV written by WriteDraws (or by any tool using
// the same tidy layout) and returns a Fit with zero Stats. The rows must be
// chain-major, chains numbered 1, 2, … and iterations 1, 2, … within each
// chain, all chains of equal length; .draw must count 1, 2, … over all rows.
// Problems are returned as *ParseError.
func ReadDraws(r io.Reader) (*Fit, error) {
	cr := csv.NewReader(bufio.NewReader(r))
	cr.ReuseRecord = true
	header, err := cr.Read()
	if err == io.EOF {
		return nil, &ParseError{Line: 1, Err: errors.New("empty file, want a header")}
	}
	if err != nil {
		return nil, err
	}
	want := []string{ChainColumn, IterationColumn, DrawColumn}
	if len(header) < 4 {
		return nil, &ParseError{Line: 1, Err: fmt.Errorf("header has %d columns, want .chain,.iteration,.draw and at least one parameter", len(header))}
	}
	for i, w := range want {
		if header[i] != w {
			return nil, &ParseError{Line: 1, Err: fmt.Errorf("column %d is %q, want %q", i+1, header[i], w)}
		}
	}
	names := append([]string(nil), header[3:]...)
	seen := make(map[string]bool, len(names))
	for _, n := range names {
		if seen[n] {
			return nil, &ParseError{Line: 1, Column: n, Err: errors.New("duplicate parameter name")}
		}
		seen[n] = true
	}
	k := len(names)
	var chains [][]float64 // row-major data per chain
	line := 1
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		line++
		if err != nil {
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				return nil, &ParseError{Line: pe.Line, Err: pe.Err}
			}
			return nil, err
		}
		idx := [3]int{}
		for i := range idx {
			v, err := strconv.Atoi(rec[i])
			if err != nil {
				return nil, &ParseError{Line: line, Column: header[i], Err: fmt.Errorf("%q is not an integer", rec[i])}
			}
			idx[i] = v
		}
		c, it, d := idx[0], idx[1], idx[2]
		switch {
		case c == len(chains)+1:
			chains = append(chains, nil)
		case c != len(chains):
			return nil, &ParseError{Line: line, Column: ChainColumn, Err: fmt.Errorf("chain %d follows chain %d, want chains in order 1, 2, …", c, len(chains))}
		}
		cur := chains[c-1]
		if it != len(cur)/k+1 {
			return nil, &ParseError{Line: line, Column: IterationColumn, Err: fmt.Errorf("iteration %d, want %d", it, len(cur)/k+1)}
		}
		if d != line-1 {
			return nil, &ParseError{Line: line, Column: DrawColumn, Err: fmt.Errorf("draw %d, want %d", d, line-1)}
		}
		for j := 0; j < k; j++ {
			v, err := strconv.ParseFloat(rec[3+j], 64)
			if err != nil {
				return nil, &ParseError{Line: line, Column: names[j], Err: fmt.Errorf("%q is not a number", rec[3+j])}
			}
			cur = append(cur, v)
		}
		chains[c-1] = cur
	}
	if len(chains) == 0 {
		return nil, &ParseError{Line: line, Err: errors.New("no draws")}
	}
	n := len(chains[0]) / k
	fit := &Fit{Names: names, Chains: make([]Chain, len(chains))}
	for c, data := range chains {
		if len(data)/k != n {
			return nil, &ParseError{Line: line, Column: ChainColumn, Err: fmt.Errorf("chain %d has %d draws, chain 1 has %d; want equal lengths", c+1, len(data)/k, n)}
		}
		fit.Chains[c] = Chain{Draws: mat.NewDense(n, k, data)}
	}
	return fit, nil
}
