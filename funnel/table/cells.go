package table

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"
)

// DateLayout is the layout of a Date cell (ISO 8601).
const DateLayout = "2006-01-02"

// formatG spells v in the shortest form that parses back to the same
// float64 (±Inf as +Inf and -Inf), and NaN as nan.
func formatG(v float64, nan string) string {
	if math.IsNaN(v) {
		return nan
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// finite parses a cell that must hold a finite number.
func finite(s string) (float64, error) {
	if s == "" {
		return 0, fmt.Errorf("empty cell, expected a number")
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("%q is not a finite number", s)
	}
	return v, nil
}

// undefined reports whether s spells a value that could not be computed.
func undefined(s string) bool {
	switch strings.ToLower(strings.TrimLeft(s, "+-")) {
	case "na", "nan", "inf", "infinity":
		return true
	}
	return false
}

// Float is a cell that must hold a finite number. It is written in the
// shortest form that reads back exactly, NaN as an empty cell.
type Float float64

func (f Float) MarshalCSV() (string, error) { return formatG(float64(f), ""), nil }

func (f *Float) UnmarshalCSV(s string) error {
	v, err := finite(s)
	*f = Float(v)
	return err
}

// OptFloat is a number that may be undefined (an effect per unit of spend
// in a window without spend): an empty cell, NA, NaN or an infinity reads
// as NaN. It is written as Float is.
type OptFloat float64

func (f OptFloat) MarshalCSV() (string, error) { return formatG(float64(f), ""), nil }

func (f *OptFloat) UnmarshalCSV(s string) error {
	if s == "" || undefined(s) {
		*f = OptFloat(math.NaN())
		return nil
	}
	v, err := finite(s)
	*f = OptFloat(v)
	return err
}

// UndefFloat is OptFloat, but an empty cell is an error: the value must be
// written, if only as NaN (a share of a zero total).
type UndefFloat float64

// MarshalCSV writes NaN as NaN, not as an empty cell, which would not read
// back.
func (f UndefFloat) MarshalCSV() (string, error) { return formatG(float64(f), "NaN"), nil }

func (f *UndefFloat) UnmarshalCSV(s string) error {
	if undefined(s) {
		*f = UndefFloat(math.NaN())
		return nil
	}
	v, err := finite(s)
	*f = UndefFloat(v)
	return err
}

// Stat is a finite posterior statistic, written in the shortest form that
// reads back exactly and NaN as NaN (as the sampler's summaries are).
type Stat float64

func (f Stat) MarshalCSV() (string, error) { return formatG(float64(f), "NaN"), nil }

func (f *Stat) UnmarshalCSV(s string) error {
	v, err := finite(s)
	*f = Stat(v)
	return err
}

// OptStat is a diagnostic that may be undefined (R-hat of a constant
// parameter): written as Stat is, read as OptFloat is.
type OptStat float64

func (f OptStat) MarshalCSV() (string, error) { return formatG(float64(f), "NaN"), nil }

func (f *OptStat) UnmarshalCSV(s string) error {
	var o OptFloat
	err := o.UnmarshalCSV(s)
	*f = OptStat(o)
	return err
}

// Tenths is a finite number written with one decimal (a grid of
// correlations -0.9, ..., 0.9).
type Tenths float64

func (f Tenths) MarshalCSV() (string, error) { return strconv.FormatFloat(float64(f), 'f', 1, 64), nil }

func (f *Tenths) UnmarshalCSV(s string) error {
	v, err := finite(s)
	*f = Tenths(v)
	return err
}

// Int is an integer; an integral number such as "12.0" is accepted back.
type Int int

func (n Int) MarshalCSV() (string, error) { return strconv.Itoa(int(n)), nil }

func (n *Int) UnmarshalCSV(s string) error {
	v, err := strconv.Atoi(s)
	if err != nil {
		f, ferr := strconv.ParseFloat(s, 64)
		if ferr != nil || f != math.Trunc(f) || math.Abs(f) > 1<<53 {
			return fmt.Errorf("%q is not an integer", s)
		}
		v = int(f)
	}
	*n = Int(v)
	return nil
}

// Date is a day written YYYY-MM-DD, read as UTC midnight.
type Date time.Time

func (d Date) MarshalCSV() (string, error) { return time.Time(d).Format(DateLayout), nil }

func (d *Date) UnmarshalCSV(s string) error {
	t, err := time.Parse(DateLayout, s)
	if err != nil {
		return fmt.Errorf("%q is not a date YYYY-MM-DD", s)
	}
	*d = Date(t)
	return nil
}

// Money is an amount of currency, written with two decimals (whole cents,
// never in exponent form) and read back as any finite number.
type Money float64

func (m Money) MarshalCSV() (string, error) { return strconv.FormatFloat(float64(m), 'f', 2, 64), nil }

func (m *Money) UnmarshalCSV(s string) error {
	v, err := finite(s)
	*m = Money(v)
	return err
}

// OptMoney is Money that may be absent (no upper limit): NaN is written as
// an empty cell, and an empty cell reads as NaN.
type OptMoney float64

func (m OptMoney) MarshalCSV() (string, error) {
	if math.IsNaN(float64(m)) {
		return "", nil
	}
	return Money(m).MarshalCSV()
}

func (m *OptMoney) UnmarshalCSV(s string) error {
	if s == "" {
		*m = OptMoney(math.NaN())
		return nil
	}
	v, err := finite(s)
	*m = OptMoney(v)
	return err
}
