package fitfolder

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"spillway/funnel/mcmc"
)

// Verdict is verdict.txt: "trustworthy" or "not trustworthy" on the first
// line, then one reason per line prefixed with its stage.
type Verdict struct {
	Trustworthy bool
	Reasons     []Reason
}

// Reason is one line of verdict.txt after the first: Stage is the prefix
// before the colon ("outcome"), Text the rest. A line without a stage
// prefix has an empty Stage. A note that does not stop the fit from being
// trusted has Text "note: ...".
type Reason struct {
	Stage, Text string
}

// VerdictOf combines the verdicts of the stages named names: the fit is
// trustworthy when every stage is; each stage's reasons, then its
// warnings as notes, follow in stage order.
func VerdictOf(names []string, vs []mcmc.Verdict) Verdict {
	v := Verdict{Trustworthy: true}
	for i, sv := range vs {
		v.Trustworthy = v.Trustworthy && sv.Trustworthy
		for _, why := range sv.Reasons {
			v.Reasons = append(v.Reasons, Reason{Stage: names[i], Text: why})
		}
		for _, w := range sv.Warnings {
			v.Reasons = append(v.Reasons, Reason{Stage: names[i], Text: "note: " + w})
		}
	}
	return v
}

// Text returns verdict.txt.
func (v Verdict) Text() string {
	var sb strings.Builder
	if v.Trustworthy {
		sb.WriteString("trustworthy\n")
	} else {
		sb.WriteString("not trustworthy\n")
	}
	for _, r := range v.Reasons {
		if r.Stage != "" {
			fmt.Fprintf(&sb, "%s: ", r.Stage)
		}
		sb.WriteString(r.Text + "\n")
	}
	return sb.String()
}

func readVerdict(path string) (Verdict, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return Verdict{}, openError(path, hintFit, err)
	}
	var v Verdict
	sc := bufio.NewScanner(bytes.NewReader(b))
	line := 0
	for sc.Scan() {
		line++
		text := strings.TrimSpace(sc.Text())
		if line == 1 {
			switch text {
			case "trustworthy":
				v.Trustworthy = true
			case "not trustworthy":
			default:
				return Verdict{}, &Error{File: path, Line: 1,
					Err: fmt.Errorf("first line %q is neither \"trustworthy\" nor \"not trustworthy\"", text)}
			}
			continue
		}
		if text == "" {
			continue
		}
		r := Reason{Text: text}
		if stage, rest, ok := strings.Cut(text, ":"); ok && !strings.ContainsAny(stage, " \t") {
			r = Reason{Stage: stage, Text: strings.TrimSpace(rest)}
		}
		v.Reasons = append(v.Reasons, r)
	}
	if line == 0 {
		return Verdict{}, &Error{File: path, Err: errors.New("empty file")}
	}
	return v, nil
}

// ReadVerdict reads dir/verdict.txt (for split, which adds its notes to it).
func ReadVerdict(dir string) (Verdict, error) {
	return readVerdict(filepath.Join(dir, "verdict.txt"))
}
