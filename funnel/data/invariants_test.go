package data

import (
	"bytes"
	"math"
	"reflect"
	"testing"
)

// checkInvariants checks what every accepted Dataset promises, including that
// WriteCSV and Read give it back.
func checkInvariants(t testing.TB, d *Dataset) {
	t.Helper()
	if len(d.Weeks) < MinWeeks {
		t.Fatalf("accepted %d weeks, fewer than %d", len(d.Weeks), MinWeeks)
	}
	for i := 1; i < len(d.Weeks); i++ {
		if d.Weeks[i].Sub(d.Weeks[i-1]) != week {
			t.Fatalf("weeks %v and %v are not 7 days apart", d.Weeks[i-1], d.Weeks[i])
		}
	}
	if len(d.Regions) == 0 || (d.Spec.Region == "" && (len(d.Regions) != 1 || d.Regions[0].Name != "")) {
		t.Fatalf("bad regions for spec region %q: %d", d.Spec.Region, len(d.Regions))
	}
	n := len(d.Weeks)
	names := map[string]bool{}
	finite := func(what string, x []float64, nonneg bool) {
		if len(x) != n {
			t.Fatalf("%s has %d weeks, want %d", what, len(x), n)
		}
		for _, v := range x {
			if math.IsNaN(v) || math.IsInf(v, 0) || (nonneg && v < 0) {
				t.Fatalf("%s holds %v", what, v)
			}
		}
	}
	anySpend := make([]bool, len(d.Spec.Upper)+len(d.Spec.Search))
	for _, r := range d.Regions {
		if names[r.Name] {
			t.Fatalf("region %q twice", r.Name)
		}
		names[r.Name] = true
		if !reflect.DeepEqual(r.Weeks, d.Weeks) {
			t.Fatalf("region %q has other weeks", r.Name)
		}
		if (d.Spec.Population != "") != (r.Population > 0) {
			t.Fatalf("region %q population %v with population column %q", r.Name, r.Population, d.Spec.Population)
		}
		if len(r.Upper) != len(d.Spec.Upper) || len(r.Search) != len(d.Spec.Search) || len(r.Controls) != len(d.Spec.Controls) {
			t.Fatalf("region %q has the wrong number of series", r.Name)
		}
		for i, x := range append(append([][]float64(nil), r.Upper...), r.Search...) {
			finite("spend", x, true)
			anySpend[i] = anySpend[i] || nonZero(x) > 0
		}
		finite("queries", r.Queries, true)
		finite("outcome", r.Outcome, true)
		for _, x := range r.Controls {
			finite("control", x, false)
			constant := true
			for _, v := range x {
				constant = constant && v == x[0]
			}
			if constant {
				t.Fatalf("region %q has a constant control", r.Name)
			}
		}
	}
	for i, ok := range anySpend {
		if !ok {
			t.Fatalf("spend column %d is all zero", i)
		}
	}
	nat := d.National()
	for _, x := range append(append(append([][]float64{nat.Queries, nat.Outcome}, nat.Upper...), nat.Search...), nat.Controls...) {
		finite("national series", x, false)
	}
	var buf bytes.Buffer
	if err := WriteCSV(&buf, d); err != nil {
		t.Fatalf("WriteCSV: %v", err)
	}
	e, err := Read(&buf, d.File, d.Spec)
	if err != nil {
		t.Fatalf("Read(WriteCSV(d)): %v", err)
	}
	if !reflect.DeepEqual(d, e) {
		t.Fatalf("Read(WriteCSV(d)) differs from d")
	}
}
