package data

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"slices"
	"sort"
	"strconv"
	"strings"
	"time"
)

// MinWeeks is the fewest weeks of data Read accepts: one full year, so that
// seasonality can be told apart from media effects.
const MinWeeks = 52

// DateLayout is the layout of week-start dates (ISO 8601, YYYY-MM-DD).
const DateLayout = "2006-01-02"

const week = 7 * 24 * time.Hour

var utf8BOM = []byte{0xEF, 0xBB, 0xBF}

// Load reads the CSV file at path with the columns spec names; see Read.
// The file name in errors and in Dataset.File is path.
func Load(path string, spec Spec) (*Dataset, error) {
	f, err := os.Open(path)
	if err != nil {
		var pe *fs.PathError
		if errors.As(err, &pe) {
			err = pe.Err
		}
		return nil, &DataError{File: path, Err: fmt.Errorf("cannot read the data file: %w", err)}
	}
	defer f.Close()
	return Read(f, path, spec)
}

// Read reads a comma-separated file with a header line from r, takes the
// columns spec names and checks them; file names the input in errors and in
// Dataset.File. Other columns are ignored. CRLF line ends and a UTF-8
// byte-order mark are accepted; spaces around cells are ignored.
//
// Every rejection is a *DataError: a malformed or ragged line, a missing or
// duplicate column, an empty, non-numeric or non-finite cell, negative spend,
// queries or outcome, a bad date, weeks of a region that are not consecutive
// 7-day steps in increasing order, regions with different weeks, fewer than
// MinWeeks weeks, a spend column that is zero in every week, a control that
// is constant within a region, and a population that is not positive or
// differs between rows of a region. Rows of different regions may be
// interleaved. Regions keep the order of their first row.
func Read(r io.Reader, file string, spec Spec) (*Dataset, error) {
	if err := spec.Validate(); err != nil {
		return nil, err
	}
	raw, err := io.ReadAll(r)
	if err != nil {
		return nil, &DataError{File: file, Err: fmt.Errorf("cannot read the data: %w", err)}
	}
	p := &parser{file: file, spec: spec, raw: bytes.TrimPrefix(raw, utf8BOM)}
	return p.parse()
}

// parser holds the state of one Read.
type parser struct {
	file string
	spec Spec
	raw  []byte
	cols []column // the spec's columns
	idx  []int    // file field index of each of cols
	// numeric columns: positions in cols of upper, search, queries, outcome,
	// controls in that order, which is also the order of region.vals.
	num     []int
	ord     []int // positions in cols sorted by file column
	regions []*builder
	byName  map[string]*builder
	// caseTwins are header names that differ only in case, in file order.
	caseTwins [][2]string
}

// builder collects the rows of one region.
type builder struct {
	name      string
	pop       float64
	popLine   int
	weeks     []time.Time
	lines     []int
	vals      [][]float64 // [numeric column][row]
	firstLine int
}

func (p *parser) errAt(line, col int, header, format string, args ...any) *DataError {
	return errAt(p.file, line, col, header, format, args...)
}

func (p *parser) parse() (*Dataset, error) {
	if len(bytes.TrimSpace(p.raw)) == 0 {
		return nil, &DataError{File: p.file, Err: errors.New("the file is empty; expected a header line with column names, then one row per week")}
	}
	if bytes.HasPrefix(p.raw, []byte{0xFF, 0xFE}) || bytes.HasPrefix(p.raw, []byte{0xFE, 0xFF}) {
		return nil, &DataError{File: p.file, Err: errors.New("the file is UTF-16 text; expected UTF-8 (save it as \"CSV UTF-8\")")}
	}
	if bytes.IndexByte(p.raw, '\r') >= 0 && bytes.IndexByte(p.raw, '\n') < 0 {
		return nil, p.errAt(1, 0, "", "lines end with a bare carriage return (old Mac style); expected LF or CRLF line ends")
	}
	if err := p.sniff(); err != nil {
		return nil, err
	}
	cr := csv.NewReader(bytes.NewReader(p.raw))
	cr.FieldsPerRecord = -1
	cr.ReuseRecord = true
	header, err := cr.Read()
	if err != nil {
		return nil, p.csvError(err)
	}
	headerLine, _ := cr.FieldPos(0)
	if err := p.header(header, headerLine); err != nil {
		return nil, err
	}
	width := len(header)
	p.byName = map[string]*builder{}
	rows := 0
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, p.csvError(err)
		}
		line, _ := cr.FieldPos(0)
		if blank(rec) {
			continue // a row of empty fields, as spreadsheets append
		}
		if len(rec) != width {
			col := min(len(rec), width) + 1
			return nil, p.errAt(line, col, "", "line has %d fields but the header has %d; expected %d comma-separated fields on every line", len(rec), width, width)
		}
		if err := p.row(rec, line); err != nil {
			return nil, err
		}
		rows++
	}
	if rows == 0 {
		return nil, &DataError{File: p.file, Err: fmt.Errorf("the file has a header but no data rows; expected one row per week (at least %d weeks)", MinWeeks)}
	}
	return p.finish()
}

// blank reports whether every field of rec is empty or spaces.
func blank(rec []string) bool {
	for _, f := range rec {
		if strings.TrimSpace(f) != "" {
			return false
		}
	}
	return true
}

// sniff rejects files that use another delimiter, judged from the first
// non-blank line.
func (p *parser) sniff() error {
	first := p.raw
	line := 1
	for {
		i := bytes.IndexByte(first, '\n')
		if i < 0 || len(bytes.TrimSpace(first[:i])) > 0 {
			if i >= 0 {
				first = first[:i]
			}
			break
		}
		first = first[i+1:]
		line++
	}
	commas := bytes.Count(first, []byte(","))
	for _, d := range []struct {
		sep  string
		name string
	}{{";", "';'"}, {"\t", "tab"}, {"|", "'|'"}} {
		if n := bytes.Count(first, []byte(d.sep)); n > 0 && n > commas {
			return p.errAt(line, 0, "", "looks like %s-separated; spillway reads comma-separated files (fields separated by ',', decimals written with '.')", d.name)
		}
	}
	return nil
}

// csvError turns an encoding/csv error into a located *DataError whose column
// is the field number.
func (p *parser) csvError(err error) error {
	var pe *csv.ParseError
	if !errors.As(err, &pe) {
		return &DataError{File: p.file, Err: err}
	}
	col := p.fieldAt(pe.StartLine, pe.Line, pe.Column)
	var msg string
	switch {
	case errors.Is(pe.Err, csv.ErrBareQuote):
		msg = `a quote (") inside an unquoted field; expected the whole field in quotes, with inner quotes doubled ("")`
	case errors.Is(pe.Err, csv.ErrQuote):
		msg = `a quoted field is not closed properly; expected a closing quote (") followed by a comma or the end of the line`
	default:
		msg = pe.Err.Error()
	}
	return &DataError{File: p.file, Line: pe.Line, Column: col, Err: errors.New(msg)}
}

// fieldAt returns the 1-based field number at the 1-based byte column col
// of line, for a record that starts on startLine.
func (p *parser) fieldAt(startLine, line, col int) int {
	b := p.raw
	off := 0
	for l := 1; l < startLine && off < len(b); l++ {
		i := bytes.IndexByte(b[off:], '\n')
		if i < 0 {
			off = len(b)
			break
		}
		off += i + 1
	}
	field, inQuote := 1, false
	l, c := startLine, 1
	for ; off < len(b); off++ {
		if l > line || (l == line && c >= col) {
			break
		}
		switch ch := b[off]; {
		case ch == '"':
			inQuote = !inQuote
		case ch == ',' && !inQuote:
			field++
		case ch == '\n':
			l, c = l+1, 0
		}
		c++
	}
	return field
}

// header locates the spec's columns in the header line.
func (p *parser) header(header []string, line int) error {
	names := make([]string, len(header))
	first := map[string]int{}
	for j, h := range header {
		h = strings.TrimSpace(h)
		names[j] = h
		if h == "" {
			continue
		}
		if k, dup := first[h]; dup {
			return p.errAt(line, j+1, h, "appears twice in the header (also column %d); expected unique column names", k+1)
		}
		first[h] = j
	}
	p.caseTwins = caseTwins(names)
	p.cols = p.spec.columns()
	p.idx = make([]int, len(p.cols))
	for i, c := range p.cols {
		name := strings.TrimSpace(c.name)
		j, ok := first[name]
		if !ok {
			hint := ""
			for _, h := range names {
				if strings.EqualFold(h, name) || strings.EqualFold(strings.ReplaceAll(h, " ", "_"), strings.ReplaceAll(name, " ", "_")) {
					hint = fmt.Sprintf(" (did you mean %q?)", Excerpt(h))
					break
				}
			}
			return p.errAt(line, 0, name, "not in the header (asked for by %s)%s; the header has %s", roleInfo[c.role].flag, hint, listNames(names))
		}
		p.idx[i] = j
		switch c.role {
		case roleUpper, roleSearch, roleQueries, roleOutcome, roleControl, roleExposure, roleFrequency:
			p.num = append(p.num, i)
		}
	}
	p.ord = p.order()
	return nil
}

// listNames quotes up to 20 header names for an error message.
func listNames(names []string) string {
	const most = 20
	q := make([]string, 0, most+1)
	for i, n := range names {
		if i == most {
			q = append(q, fmt.Sprintf("and %d more", len(names)-most))
			break
		}
		q = append(q, strconv.Quote(Excerpt(n)))
	}
	return strings.Join(q, ", ")
}

// order returns the positions in p.cols sorted by file column, so that the
// first bad cell of a row reported is the leftmost.
func (p *parser) order() []int {
	ord := make([]int, len(p.cols))
	for i := range ord {
		ord[i] = i
	}
	sort.SliceStable(ord, func(a, b int) bool { return p.idx[ord[a]] < p.idx[ord[b]] })
	return ord
}

// row parses and checks one data row.
func (p *parser) row(rec []string, line int) error {
	var (
		date   time.Time
		region string
		pop    float64
	)
	nums := make([]float64, len(p.cols))
	for _, i := range p.ord {
		c := p.cols[i]
		j := p.idx[i]
		cell := strings.TrimSpace(rec[j])
		at := func(format string, args ...any) error {
			return p.errAt(line, j+1, strings.TrimSpace(c.name), format, args...)
		}
		switch c.role {
		case roleDate:
			if cell == "" {
				return at("empty cell; expected a week start date like 2024-01-01 (YYYY-MM-DD)")
			}
			d, err := time.Parse(DateLayout, cell)
			if err != nil {
				return at("%q is not a date; expected YYYY-MM-DD, like 2024-01-01", Excerpt(cell))
			}
			date = d
		case roleRegion:
			if cell == "" {
				return at("empty cell; expected a region name")
			}
			region = cell
		default:
			v, msg := parseNumber(cell)
			if msg != "" {
				if cell == "" && (c.role == roleUpper || c.role == roleSearch) {
					msg += " (write 0 for a week without spend)"
				}
				return at("%s", msg)
			}
			switch c.role {
			case rolePopulation:
				if v <= 0 {
					return at("population %s is not positive; expected the number of people in the region", cell)
				}
				pop = v
			case roleUpper, roleSearch:
				if v < 0 {
					return at("%s is negative; spend cannot be negative", cell)
				}
			case roleQueries:
				if v < 0 {
					return at("%s is negative; query volume cannot be negative", cell)
				}
			case roleOutcome:
				if v < 0 {
					return at("%s is negative; the outcome cannot be negative", cell)
				}
			case roleExposure:
				if v < 0 {
					return at("%s is negative; exposure cannot be negative", cell)
				}
			case roleFrequency:
				if v < 0 {
					return at("%s is negative; a frequency cannot be negative", cell)
				}
			}
			nums[i] = v
		}
	}
	if err := p.checkExposure(nums, rec, line, pop); err != nil {
		return err
	}
	b := p.byName[region]
	if b == nil {
		b = &builder{name: region, pop: pop, popLine: line, firstLine: line, vals: make([][]float64, len(p.num))}
		p.byName[region] = b
		p.regions = append(p.regions, b)
	}
	if p.spec.Population != "" && pop != b.pop {
		j := p.idx[p.colOf(rolePopulation)]
		return p.errAt(line, j+1, strings.TrimSpace(p.spec.Population), "population %s of region %q differs from %s on line %d; expected the same population in every row of a region",
			fmtNum(pop), Excerpt(region), fmtNum(b.pop), b.popLine)
	}
	b.weeks = append(b.weeks, date)
	b.lines = append(b.lines, line)
	for k, i := range p.num {
		b.vals[k] = append(b.vals[k], nums[i])
	}
	return nil
}

func (p *parser) colOf(r role) int {
	for i, c := range p.cols {
		if c.role == r {
			return i
		}
	}
	panic("data: role not in spec")
}

// checkOrder finds the first row of b whose week is not after the week
// before it: a duplicate or an unsorted week.
func (p *parser) checkOrder(b *builder) *DataError {
	j := p.idx[p.colOf(roleDate)]
	name := strings.TrimSpace(p.spec.Date)
	of := ""
	if p.spec.Region != "" {
		of = fmt.Sprintf(" of region %q", Excerpt(b.name))
	}
	first := map[time.Time]int{}
	for t, date := range b.weeks {
		ds := date.Format(DateLayout)
		if k, dup := first[date]; dup {
			hint := ""
			if p.spec.Region == "" {
				hint = " (if the file has one row per region and week, name the region column with --region)"
			}
			return p.errAt(b.lines[t], j+1, name, "week %s%s appears twice (first on line %d); expected one row per week%s", ds, of, b.lines[k], hint)
		}
		first[date] = t
		if t > 0 && date.Before(b.weeks[t-1]) {
			hint := ""
			if descending(b.weeks) {
				hint = " (the file runs newest first; sort it by date, oldest first)"
			}
			return p.errAt(b.lines[t], j+1, name, "week %s%s comes after %s (line %d); expected weeks in increasing order%s",
				ds, of, b.weeks[t-1].Format(DateLayout), b.lines[t-1], hint)
		}
	}
	return nil
}

// descending reports whether weeks strictly decrease.
func descending(weeks []time.Time) bool {
	for t := 1; t < len(weeks); t++ {
		if !weeks[t].Before(weeks[t-1]) {
			return false
		}
	}
	return true
}

// checkGaps finds the first week of b (already in increasing order) that is
// not 7 days after the week before it.
func (p *parser) checkGaps(b *builder) *DataError {
	j := p.idx[p.colOf(roleDate)]
	name := strings.TrimSpace(p.spec.Date)
	of := ""
	if p.spec.Region != "" {
		of = fmt.Sprintf(" of region %q", Excerpt(b.name))
	}
	for t := 1; t < len(b.weeks); t++ {
		last, date := b.weeks[t-1], b.weeks[t]
		d := date.Sub(last)
		if d == week {
			continue
		}
		msg := fmt.Sprintf("week %s%s follows %s (line %d) by %g days; expected consecutive weeks 7 days apart",
			date.Format(DateLayout), of, last.Format(DateLayout), b.lines[t-1], d.Hours()/24)
		if d > week && d%week == 0 {
			msg += fmt.Sprintf(" (%d missing, from %s)", int(d/week)-1, last.Add(week).Format(DateLayout))
		}
		return p.errAt(b.lines[t], j+1, name, "%s", msg)
	}
	return nil
}

// firstError returns the error of check with the smallest line over regions.
func (p *parser) firstError(check func(*builder) *DataError) error {
	var first *DataError
	for _, b := range p.regions {
		if err := check(b); err != nil && (first == nil || err.Line < first.Line) {
			first = err
		}
	}
	if first == nil {
		return nil
	}
	return first
}

// finish checks the whole-file conditions and builds the Dataset.
func (p *parser) finish() (*Dataset, error) {
	dateCol := p.idx[p.colOf(roleDate)] + 1
	dateName := strings.TrimSpace(p.spec.Date)
	if err := p.firstError(p.checkOrder); err != nil {
		return nil, err
	}
	if err := p.firstError(p.checkGaps); err != nil {
		return nil, err
	}
	ref := p.regions[0]
	for _, b := range p.regions[1:] {
		if !b.weeks[0].Equal(ref.weeks[0]) {
			return nil, p.errAt(b.firstLine, dateCol, dateName, "region %q starts on %s but region %q starts on %s; expected every region to cover the same weeks",
				Excerpt(b.name), b.weeks[0].Format(DateLayout), Excerpt(ref.name), ref.weeks[0].Format(DateLayout))
		}
		if len(b.weeks) != len(ref.weeks) {
			n := len(b.weeks)
			return nil, p.errAt(b.lines[n-1], dateCol, dateName, "region %q ends on %s but region %q ends on %s; expected every region to cover the same weeks",
				Excerpt(b.name), b.weeks[n-1].Format(DateLayout), Excerpt(ref.name), ref.weeks[len(ref.weeks)-1].Format(DateLayout))
		}
	}
	n := len(ref.weeks)
	if n < MinWeeks {
		per := ""
		if p.spec.Region != "" {
			per = " per region"
		}
		return nil, &DataError{File: p.file, Err: fmt.Errorf("only %d weeks%s (%s to %s); expected at least %d weeks, so that seasonality can be told apart from media effects",
			n, per, ref.weeks[0].Format(DateLayout), ref.weeks[n-1].Format(DateLayout), MinWeeks)}
	}
	for k, i := range p.num {
		c := p.cols[i]
		name := strings.TrimSpace(c.name)
		col := p.idx[i] + 1
		switch c.role {
		case roleUpper, roleSearch:
			zero := true
			for _, b := range p.regions {
				for _, v := range b.vals[k] {
					if v != 0 {
						zero = false
					}
				}
			}
			if zero {
				return nil, p.errAt(1, col, name, "spend is zero in every week; a channel without spend cannot be estimated; drop it from %s", roleInfo[c.role].flag)
			}
		case roleQueries, roleOutcome:
			// A fit divides each series by its mean and explains its
			// movements: a series that never moves (zero included) has
			// nothing to explain, and would only make the sampler wander.
			for _, b := range p.regions {
				v := b.vals[k]
				if slices.Min(v) != slices.Max(v) {
					continue
				}
				in := ""
				if p.spec.Region != "" {
					in = fmt.Sprintf(" of region %q", Excerpt(b.name))
				}
				what := roleInfo[c.role].what
				if v[0] == 0 {
					return nil, p.errAt(1, col, name, "the %s is zero in every week%s; expected the series the model explains (%s), which must vary", what, in, roleInfo[c.role].flag)
				}
				return nil, p.errAt(1, col, name, "the %s has the same value (%s) in every week%s; a series that never moves says nothing about media effects; expected the real weekly %s", what, fmtNum(v[0]), in, what)
			}
		case roleControl:
			for _, b := range p.regions {
				v := b.vals[k]
				constant := true
				for _, x := range v[1:] {
					if x != v[0] {
						constant = false
						break
					}
				}
				if constant {
					in := ""
					if p.spec.Region != "" {
						in = fmt.Sprintf(" of region %q", Excerpt(b.name))
					}
					return nil, p.errAt(1, col, name, "the control has the same value (%s) in every week%s; a constant control cannot be told apart from the baseline; drop it from --controls", fmtNum(v[0]), in)
				}
			}
		}
	}
	for k, i := range p.num {
		sum := 0.0
		for _, b := range p.regions {
			for _, v := range b.vals[k] {
				sum += math.Abs(v)
			}
		}
		if math.IsInf(sum, 0) {
			return nil, p.errAt(1, p.idx[i]+1, strings.TrimSpace(p.cols[i].name),
				"the values are too large to add up (the sum over weeks and regions overflows); expected values in the column's real units")
		}
	}
	d := &Dataset{Spec: p.spec, File: p.file}
	d.Weeks = append([]time.Time(nil), ref.weeks...)
	nu, ns, nc := len(p.spec.Upper), len(p.spec.Search), len(p.spec.Controls)
	for _, b := range p.regions {
		r := Region{Name: b.name, Population: b.pop}
		r.Weeks = b.weeks
		r.Upper = b.vals[:nu:nu]
		r.Search = b.vals[nu : nu+ns : nu+ns]
		r.Queries = b.vals[nu+ns]
		r.Outcome = b.vals[nu+ns+1]
		if nc > 0 {
			r.Controls = b.vals[nu+ns+2 : nu+ns+2+nc : nu+ns+2+nc]
		}
		if len(p.spec.Exposure) > 0 {
			r.Exposure = make([][]float64, nu)
			k := nu + ns + 2 + nc
			for c, col := range p.spec.Upper {
				if _, ok := p.spec.ExposureOf(col); ok {
					r.Exposure[c] = b.vals[k]
					k++
				}
			}
			for c, col := range p.spec.Upper {
				if e, ok := p.spec.ExposureOf(col); ok && e.Frequency != "" {
					if r.Frequency == nil {
						r.Frequency = make([][]float64, nu)
					}
					r.Frequency[c] = b.vals[k]
					k++
				}
			}
		}
		d.Regions = append(d.Regions, r)
	}
	if len(d.Regions) > 1 {
		// Region means that cancel exactly would leave the national series
		// (which the national model scales by its sd) constant.
		nat := d.National()
		for k, x := range nat.Controls {
			lo, hi := slices.Min(x), slices.Max(x)
			if hi-lo <= 1e-12*max(math.Abs(lo), math.Abs(hi)) { // equal up to rounding of the weighted mean
				i := p.colOf(roleControl) + k
				return nil, p.errAt(1, p.idx[i]+1, strings.TrimSpace(p.cols[i].name),
					"the control's national mean (%s) is the same in every week; a constant control cannot be told apart from the baseline; drop it from --controls", strconv.FormatFloat(x[0], 'g', 6, 64))
			}
		}
	}
	if err := checkBreaks(p.spec, d.Weeks); err != nil {
		return nil, err
	}
	d.Warnings = warnings(d)
	if len(p.spec.Exposure) > 0 {
		d.Warnings = append(d.Warnings, costJumps(d, d.National())...)
	}
	for _, tw := range p.caseTwins {
		d.Warnings = append(d.Warnings, Warning{KindNames, tw[0] + "," + tw[1],
			fmt.Sprintf("columns %q and %q differ only in case; check that the flags name the one you mean", Excerpt(tw[0]), Excerpt(tw[1]))})
	}
	regions := make([]string, len(d.Regions))
	for i, r := range d.Regions {
		regions[i] = r.Name
	}
	for _, tw := range caseTwins(regions) {
		d.Warnings = append(d.Warnings, Warning{KindNames, p.spec.Region,
			fmt.Sprintf("regions %q and %q differ only in case; they are fitted as two regions; if they are one, spell them alike", Excerpt(tw[0]), Excerpt(tw[1]))})
	}
	return d, nil
}

// parseNumber parses a plain decimal number (optional sign, digits with an
// optional decimal point, optional exponent). It returns a non-empty message
// saying what is wrong and what was expected when the cell is not one.
func parseNumber(cell string) (float64, string) {
	const want = "expected a plain decimal like 1250.5"
	switch strings.ToLower(cell) {
	case "":
		return 0, "empty cell; expected a number"
	case "nan", "+nan", "-nan", "inf", "+inf", "-inf", "infinity", "+infinity", "-infinity":
		return 0, fmt.Sprintf("%q is not a finite number; %s", Excerpt(cell), want)
	case "na", "n/a", "null", "none", "nil", "missing", "-":
		return 0, fmt.Sprintf("%q marks a missing value; expected a number in every week", Excerpt(cell))
	}
	if !plainDecimal(cell) {
		return 0, fmt.Sprintf("%q is not a number; %s", Excerpt(cell), want)
	}
	v, err := strconv.ParseFloat(cell, 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return 0, fmt.Sprintf("%q is out of range; %s", Excerpt(cell), want)
	}
	return v, ""
}

// plainDecimal reports whether s is [+-]digits[.digits][(e|E)[+-]digits]
// with at least one mantissa digit.
func plainDecimal(s string) bool {
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	digits := 0
	for i < len(s) && s[i] >= '0' && s[i] <= '9' {
		i, digits = i+1, digits+1
	}
	if i < len(s) && s[i] == '.' {
		i++
		for i < len(s) && s[i] >= '0' && s[i] <= '9' {
			i, digits = i+1, digits+1
		}
	}
	if digits == 0 {
		return false
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		i++
		if i < len(s) && (s[i] == '+' || s[i] == '-') {
			i++
		}
		exp := 0
		for i < len(s) && s[i] >= '0' && s[i] <= '9' {
			i, exp = i+1, exp+1
		}
		if exp == 0 {
			return false
		}
	}
	return i == len(s)
}

// fmtNum formats v the way WriteCSV does.
func fmtNum(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
