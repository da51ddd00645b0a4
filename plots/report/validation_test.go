package report_test

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spillway/plots/report"
)

// TestReportValidationSection: a fit folder with the output of
// 'spillway validate --out DIR/validation' gets a validation section with
// the verdict, the chart and the headline metrics (coverage as a percent);
// quarterly rows and other metrics stay in the file. Without the folder the
// report has no such section.
func TestReportValidationSection(t *testing.T) {
	x := load(t, false)
	if b := write(t, x, ""); bytes.Contains(b, []byte("<h2>Validation</h2>")) {
		t.Fatal("validation section without validation output")
	}
	dir := filepath.Join(x.f.Dir, report.ValidationDir)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	defer os.RemoveAll(dir)
	files := map[string]string{
		"verdict.txt": "recovery: recovers truth (90% intervals cover 92%)\n  Over 20 simulated data sets.\nholdout: forecasts beat the seasonal baseline\n",
		"validation.csv": "check,effect,channel,metric,value\n" +
			"recovery,via_search,video_spend,coverage_90,0.95\n" +
			"recovery,via_search_quarterly,video_spend,coverage_90,0.5\n" +
			"recovery,via_search,video_spend,bias,12.5\n" +
			"holdout,outcome,,mape,3.125\n",
		"validation.png": "\x89PNG\r\n\x1a\nnot really",
	}
	for n, s := range files {
		if err := os.WriteFile(filepath.Join(dir, n), []byte(s), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	var buf bytes.Buffer
	if err := report.Write(&buf, x.f, "", x.charts); err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	for _, want := range []string{"<h2>Validation</h2>", "<li><strong>recovery: recovers truth (90% intervals cover 92%)</strong></li>",
		`<li class="detail">Over 20 simulated data sets.</li>`,
		"<td>via search</td><td>video_spend</td><td>coverage 90</td><td class=\"num\">95%</td>",
		"<td>outcome</td><td></td><td>mape</td><td class=\"num\">3.125</td>", "data:image/png;base64,iVBORw0KGgo"} {
		if !strings.Contains(page, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	// only the checks that ran: recovery and holdout, not stability
	if !strings.Contains(page, "on this fit: recovery of known truth on data simulated like these and forecasts of weeks the model did not see") {
		t.Errorf("the section's introduction does not name exactly the checks that ran")
	}
	for _, not := range []string{"via search quarterly", "<td>bias</td>", "stability", "Stability"} {
		if strings.Contains(page, not) {
			t.Errorf("report shows %q, which should stay in validation.csv", not)
		}
	}
	os.WriteFile(filepath.Join(dir, "validation.csv"), []byte("check,effect\n"), 0o644)
	if err := report.Write(&buf, x.f, "", x.charts); err == nil || !strings.Contains(err.Error(), "validation.csv") {
		t.Errorf("a broken validation.csv: got %v, want an error naming it", err)
	}
}
