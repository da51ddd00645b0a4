package data

import (
	"bytes"
	"errors"
	"fmt"
	"strings"
	"testing"
)

// The fuzz target uses one-letter column names and small integers, so that
// its seeds are short and the fuzzer's minimisation of new inputs is quick.
var (
	fuzzSpec = Spec{Date: "d", Upper: []string{"v", "a"}, Search: []string{"s"}, Queries: "q", Outcome: "y",
		Controls: []string{"p"}}
	fuzzRegionSpec = Spec{Date: "d", Region: "r", Population: "n", Upper: []string{"v", "a"}, Search: []string{"s"},
		Queries: "q", Outcome: "y", Controls: []string{"p"}}
)

// fuzzFrame returns a valid compact file of n weeks, national or with the
// regions a and b.
func fuzzFrame(n int, regional bool) string {
	var b strings.Builder
	if regional {
		b.WriteString("d,r,n,v,a,s,q,y,p\n")
	} else {
		b.WriteString("d,v,a,s,q,y,p\n")
	}
	for t := range n {
		d := frameStart.AddDate(0, 0, 7*t).Format(DateLayout)
		vals := fmt.Sprintf("%d,%d,%d,%d,%d,%d", 10+t%7, 5+t%3, 8+t%5, 50+t%4, 20+t%6, t%2)
		if !regional {
			fmt.Fprintf(&b, "%s,%s\n", d, vals)
			continue
		}
		fmt.Fprintf(&b, "%s,a,100,%s\n%s,b,2e2,%s\n", d, vals, d, vals)
	}
	return b.String()
}

// FuzzRead feeds arbitrary bytes to Read with a national or a regional
// spec. Read must not panic, every rejection must be (or wrap) a
// *DataError, and every accepted dataset must keep the promises that
// checkInvariants checks, including the WriteCSV round trip.
func FuzzRead(f *testing.F) {
	f.Add([]byte(fuzzFrame(52, false)), false)
	f.Add([]byte(fuzzFrame(52, true)), true)
	f.Add([]byte("\ufeff"+strings.ReplaceAll(fuzzFrame(53, false), "\n", "\r\n")), false)
	f.Add([]byte(strings.Replace(fuzzFrame(52, false), "\n2023-01-09,", "\n\"2023-01-09\",", 1)), false)
	f.Add([]byte(strings.Replace(fuzzFrame(52, true), ",b,2e2,", ",\"b \"\"x\"\"\",200,", 3)), true)
	f.Add([]byte(strings.ReplaceAll(fuzzFrame(52, false), ",", ";")), false)
	f.Add([]byte(strings.Replace(fuzzFrame(52, false), "\n2023-03-06,", "\n2023-03-13,", 1)), false)
	f.Add([]byte(fuzzFrame(51, true)), true)
	f.Add([]byte("d,v,a,s,q,y,p\n2023-01-02,1,NaN,-1,\"1\"2,,x\n"), false)
	f.Fuzz(func(t *testing.T, text []byte, regional bool) {
		spec := fuzzSpec
		if regional {
			spec = fuzzRegionSpec
		}
		d, err := Read(bytes.NewReader(text), "fuzz.csv", spec)
		if err != nil {
			var de *DataError
			if !errors.As(err, &de) {
				t.Fatalf("rejection is %T, not a *DataError: %v", err, err)
			}
			if de.Err == nil || de.Line < 0 || de.Column < 0 || (de.Column > 0 && de.Line == 0) {
				t.Fatalf("malformed DataError %#v", de)
			}
			return
		}
		checkInvariants(t, d)
		if err := Summarize(d).WriteText(&bytes.Buffer{}); err != nil {
			t.Fatal(err)
		}
	})
}

// TestFuzzSeeds checks that the valid fuzz seeds are accepted, so that the
// fuzzer starts from inputs that reach the end of Read.
func TestFuzzSeeds(t *testing.T) {
	mustRead(t, fuzzFrame(52, false), fuzzSpec)
	if d := mustRead(t, fuzzFrame(52, true), fuzzRegionSpec); len(d.Regions) != 2 || d.Regions[1].Population != 200 {
		t.Errorf("regional seed: got %d regions", len(d.Regions))
	}
}
