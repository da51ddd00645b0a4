package data

import (
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

func TestLoadSpec(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "spec.json")
	text := "\ufeff" + `{
  "data": "sales.csv",
  "date": "week",
  "region": "region",
  "upper": ["video", "audio"],
  "search": "search",
  "queries": "queries",
  "outcome": "sales",
  "controls": null
}`
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	got, err := LoadSpec(path)
	if err != nil {
		t.Fatal(err)
	}
	want := Spec{Data: filepath.Join(dir, "sales.csv"), Date: "week", Region: "region", Upper: []string{"video", "audio"},
		Search: []string{"search"}, Queries: "queries", Outcome: "sales"}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("got %+v, want %+v", got, want)
	}
	if _, err := LoadSpec(filepath.Join(dir, "none.json")); err == nil || !strings.Contains(err.Error(), "none.json: cannot read the spec file: no such file") {
		t.Errorf("missing file: got %v", err)
	}
}

func TestParseSpecErrors(t *testing.T) {
	tests := []struct {
		name, text string
		line, col  int
		want       string
	}{
		{"unknown key", "{\n  \"date\": \"week\",\n  \"outcomes\": \"sales\"\n}", 3, 3,
			`spec.json:3:3: unknown key "outcomes"; expected one of data, date, region, population, upper, search, queries, outcome, controls`},
		{"key in wrong case", `{"Date": "week"}`, 1, 2, `unknown key "Date" (did you mean "date"?)`},
		{"repeated key", "{\"date\": \"a\",\n \"date\": \"b\"}", 2, 2, `key "date" appears twice`},
		{"syntax error", "{\n  \"date\": \"week\"\n  \"upper\": [\"video\"]\n}", 3, 3, `spec.json:3:3: invalid character '"' after object key:value pair`},
		{"trailing comma", "{\"date\": \"week\",}", 1, 17, `invalid character '}'`},
		{"bad value", "{\"upper\": [\"a\",]}", 1, 16, `invalid character ']' looking for beginning of value`},
		{"bad literal", "{\"upper\":\n  nul}", 2, 6, `invalid character '}' in literal null`},
		{"not closed", "{\"date\": \"week\"", 1, 16, `unexpected end of file; the JSON text is not complete`},
		{"not an object", "[\"date\"]", 1, 1, `expected a JSON object`},
		{"list for a string", "{\"queries\": [\"q\"]}", 1, 13, `"queries" must be a column name in quotes, like "video_spend"; got a list`},
		{"numbers in a list", "{\"upper\": [\"video\", 2]}", 1, 11, `"upper" must be a list of column names, like ["video_spend", "audio_spend"]; got a list holding something other than names in quotes`},
		{"number for a list", "{\"upper\": 3}", 1, 11, `"upper" must be a list of column names, like ["video_spend", "audio_spend"]; got a number`},
		{"text after", "{\"date\": \"week\"} x", 1, 18, `invalid character 'x' after top-level value`},
		{"empty", " \n", 0, 0, `spec.json: the spec file is empty`},
	}
	for _, test := range tests {
		_, err := ParseSpec([]byte(test.text), "spec.json")
		var de *DataError
		if !errors.As(err, &de) {
			t.Errorf("%s: got %v, want a *DataError", test.name, err)
			continue
		}
		if de.Line != test.line || de.Column != test.col || !strings.Contains(err.Error(), test.want) {
			t.Errorf("%s: got %d:%d %q, want %d:%d and %q", test.name, de.Line, de.Column, err, test.line, test.col, test.want)
		}
	}
}

func TestOverride(t *testing.T) {
	file := Spec{Data: "a.csv", Date: "week", Upper: []string{"video"}, Search: []string{"search"}, Queries: "q", Outcome: "y",
		Controls: []string{"price"}}
	flags := Spec{Data: "b.csv", Upper: []string{"tv", "radio"}, Outcome: "sales"}
	got := file.Override(flags)
	want := Spec{Data: "b.csv", Date: "week", Upper: []string{"tv", "radio"}, Search: []string{"search"}, Queries: "q", Outcome: "sales",
		Controls: []string{"price"}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("got %+v, want %+v", got, want)
	}
	got.Upper[0] = "changed"
	if flags.Upper[0] != "tv" {
		t.Error("Override shares the flags' slices")
	}
}

func TestValidate(t *testing.T) {
	if err := baseSpec.Validate(); err != nil {
		t.Errorf("base spec: %v", err)
	}
	tests := []struct {
		name string
		edit func(*Spec)
		want string
	}{
		{"no date", func(s *Spec) { s.Date = "" }, `no week start date column: name it with --date`},
		{"no upper", func(s *Spec) { s.Upper = nil }, `name one or more with --upper`},
		{"no search", func(s *Spec) { s.Search = nil }, `name one or more with --search`},
		{"no outcome", func(s *Spec) { s.Outcome = "" }, `no outcome column: name it with --outcome`},
		{"population without region", func(s *Spec) { s.Population = "pop" }, `--population "pop" needs --region`},
		{"empty name", func(s *Spec) { s.Controls = []string{"price", " "} }, `--controls has an empty column name`},
		{"twice in a list", func(s *Spec) { s.Upper = []string{"video", "video"} }, `column "video" is listed twice in --upper`},
		{"two roles", func(s *Spec) { s.Outcome = "queries" }, `column "queries" is given to both --queries and --outcome`},
		{"date as control", func(s *Spec) { s.Controls = []string{"week"} }, `column "week" is given to both --date and --controls`},
	}
	for _, test := range tests {
		err := withSpec(test.edit).Validate()
		var de *DataError
		if !errors.As(err, &de) || !strings.Contains(err.Error(), test.want) {
			t.Errorf("%s: got %v, want a *DataError containing %q", test.name, err, test.want)
		}
	}
}
