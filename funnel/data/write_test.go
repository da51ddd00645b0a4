package data

import (
	"bytes"
	"reflect"
	"strings"
	"testing"
)

func TestWriteCSVRoundTrip(t *testing.T) {
	tests := []struct {
		name string
		text string
		spec Spec
	}{
		{"national", baseFrame(60).csv(), baseSpec},
		{"regions with population", regionFrame(60).csv(), regionSpec},
		{"regions without population", regionFrame(60).csv(), func() Spec { s := regionSpec; s.Population = ""; return s }()},
		{"no controls", baseFrame(60).csv(), withSpec(func(s *Spec) { s.Controls = nil })},
		{"awkward numbers", func() string {
			f := baseFrame(60)
			f.set(3, "video", "1e21").set(4, "audio", "0.000000123").set(5, "price", "-0").set(6, "queries", "123456789012345678")
			return f.csv()
		}(), baseSpec},
	}
	for _, test := range tests {
		d := mustRead(t, test.text, test.spec)
		var buf bytes.Buffer
		if err := WriteCSV(&buf, d); err != nil {
			t.Fatalf("%s: WriteCSV: %v", test.name, err)
		}
		e, err := Read(bytes.NewReader(buf.Bytes()), "data.csv", test.spec)
		if err != nil {
			t.Fatalf("%s: Read(WriteCSV(d)): %v", test.name, err)
		}
		if !reflect.DeepEqual(d, e) {
			t.Errorf("%s: Read(WriteCSV(d)) differs from d", test.name)
		}
		header, _, _ := strings.Cut(buf.String(), "\n")
		if want := strings.Join(test.spec.Columns(), ","); header != want {
			t.Errorf("%s: header %q, want %q", test.name, header, want)
		}
	}
}

func TestWriteCSVText(t *testing.T) {
	d := mustRead(t, regionFrame(60).csv(), regionSpec)
	var buf bytes.Buffer
	if err := WriteCSV(&buf, d); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(buf.String(), "\n")
	// Region by region: line 2 is north's first week, line 62 south's first.
	// Values are regionFrame's (baseRow at t=0: video 1000*scale, audio
	// (500+200)*scale, search (800+150 sin 1)*scale rounded to cents).
	if want := "2023-01-02,north,1000,1000,700,926.22,"; !strings.HasPrefix(lines[1], want) {
		t.Errorf("line 2: got %q, want prefix %q", lines[1], want)
	}
	if want := "2023-01-02,south,3000,2000,1400,"; !strings.HasPrefix(lines[61], want) {
		t.Errorf("line 62: got %q, want prefix %q", lines[61], want)
	}
}
