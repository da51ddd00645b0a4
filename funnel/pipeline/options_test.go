package pipeline

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spillway/funnel/data"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
)

// TestChoicesOptions checks the options built from --linear and --priors:
// linear spend columns, priors by parameter name, and each kind of error.
func TestChoicesOptions(t *testing.T) {
	ds, err := data.Load("../../testdata/demo/data.csv", scenario.Spec)
	if err != nil {
		t.Fatal(err)
	}
	sc := model.Scale(ds.National(), ds.Spec)
	dir := t.TempDir()
	file := func(name, text string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}

	o, err := Choices{}.Options(sc)
	if err != nil || len(o.Linear) != 0 || o.Priors != nil {
		t.Errorf("no choices: got %+v, %v; want the defaults", o, err)
	}

	good := file("good.csv", "parameter,family,p1,p2\nK[video_spend],gamma,2,2\n")
	o, err = Choices{Linear: []string{"search_spend"}, Priors: good}.Options(sc)
	if err != nil {
		t.Fatal(err)
	}
	if !o.Linear["search_spend"] || len(o.Linear) != 1 {
		t.Errorf("linear: got %v, want search_spend only", o.Linear)
	}
	if p := o.Priors["K[video_spend]"]; p != (model.Prior{Family: model.Gamma, P1: 2, P2: 2}) || len(o.Priors) != 1 {
		t.Errorf("priors: got %v", o.Priors)
	}

	_, err = Choices{Linear: []string{"price"}}.Options(sc)
	var le *LinearError
	if !errors.As(err, &le) || err.Error() != "price: not an upper-funnel or paid-search column (video_spend, audio_spend, search_spend)" {
		t.Errorf("a control as linear: got %v", err)
	}

	// a linear channel has no adstock or saturation parameters to set
	lam := file("lam.csv", "parameter,family,p1,p2\nlam[video_spend],beta,3,3\n")
	_, err = Choices{Linear: []string{"video_spend"}, Priors: lam}.Options(sc)
	var pe *model.PriorError
	if !errors.As(err, &pe) || pe.Line != 2 || pe.Column != 1 {
		t.Errorf("prior on a linear channel's retention: got %v, want line 2 column 1", err)
	}
	if _, err := (Choices{Priors: lam}).Options(sc); err != nil {
		t.Errorf("the same prior without --linear: %v", err)
	}

	misfit := file("misfit.csv", "parameter,family,p1,p2\ngamma,beta,2,2\n")
	if _, err := (Choices{Priors: misfit}).Options(sc); err == nil || !strings.HasPrefix(err.Error(), misfit+":2:2: gamma: beta does not fit") {
		t.Errorf("a beta prior on gamma: got %v, want the file, line, column and parameter named", err)
	}
	// a prior whose support only shows in the compiled stage: the intercept
	// lies on the real line, so a halfnormal there is located at its family
	intercept := file("intercept.csv", "parameter,family,p1,p2\nsigma_y,halfnormal,0.5,\nmu_y,halfnormal,0.5,\n")
	if _, err := (Choices{Priors: intercept}).Options(sc); !errors.As(err, &pe) || pe.Line != 3 || pe.Column != 2 {
		t.Errorf("a halfnormal prior on an intercept: got %v, want line 3 column 2", err)
	}

	if _, err := (Choices{Priors: filepath.Join(dir, "missing.csv")}).Options(sc); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing priors file: got %v", err)
	}
}

// TestChoicesDrift checks --drift and --baseline: columns, all, a prior on
// a drift's length-scale, and the errors.
func TestChoicesDrift(t *testing.T) {
	ds, err := data.Load("../../testdata/demo/data.csv", scenario.Spec)
	if err != nil {
		t.Fatal(err)
	}
	sc := model.Scale(ds.National(), ds.Spec)
	o, err := Choices{Drift: []string{"video_spend"}, Baseline: "smooth"}.Options(sc)
	if err != nil || !o.Drift["video_spend"] || len(o.Drift) != 1 || o.Baseline != model.BaselineSmooth {
		t.Errorf("drift video, smooth baseline: %+v, %v", o, err)
	}
	o, err = Choices{Drift: []string{"all"}}.Options(sc)
	if err != nil || len(o.Drift) != 3 || o.Baseline != "" {
		t.Errorf("drift all: %+v, %v", o, err)
	}
	o, err = Choices{Drift: []string{"all"}, DriftShape: "jumps"}.Options(sc)
	if err != nil || len(o.Drift) != 3 || o.DriftShape != model.DriftJumps {
		t.Errorf("drift all with jumps: %+v, %v", o, err)
	}
	p := filepath.Join(t.TempDir(), "p.csv")
	if err := os.WriteFile(p, []byte("parameter,family,p1,p2\ndrift_len_alpha[video_spend],invgamma,3,80\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	o, err = Choices{Drift: []string{"video_spend"}, Priors: p}.Options(sc)
	if err != nil || o.Priors["drift_len_alpha[video_spend]"] != (model.Prior{Family: model.InvGamma, P1: 3, P2: 80}) {
		t.Errorf("a prior on a drift's length-scale: %+v, %v", o.Priors, err)
	}
	neg := filepath.Join(t.TempDir(), "neg.csv")
	if err := os.WriteFile(neg, []byte("parameter,family,p1,p2\ndrift_sd_alpha[video_spend],normal,0,1\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := (Choices{Drift: []string{"video_spend"}, Priors: neg}).Options(sc); err == nil || !strings.Contains(err.Error(), "a scale needs a positive prior") {
		t.Errorf("a normal prior on a drift's sd: %v", err)
	}
	// a jump weight of video's direct effect with a prior that its
	// demand-side twin does not share: the two paths' tie cannot hold it
	jump := filepath.Join(t.TempDir(), "jump.csv")
	if err := os.WriteFile(jump, []byte("parameter,family,p1,p2\n\"drift_jump_delta[video_spend,3]\",normal,0,1\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := (Choices{Drift: []string{"video_spend"}, DriftShape: "jumps", Priors: jump}).Options(sc); err == nil || !strings.Contains(err.Error(), jump) || !strings.Contains(err.Error(), "needs a Student-t") {
		t.Errorf("a normal prior on a tied jump weight: %v", err)
	}
	if _, err := (Choices{Drift: []string{"video_spend"}, DriftShape: "jumps", Priors: p}).Options(sc); err != nil {
		t.Errorf("jumps with a prior on a drift's length-scale: %v", err)
	}
	for _, c := range []struct {
		ch   Choices
		flag string
	}{{Choices{Drift: []string{"price"}}, "drift"}, {Choices{Baseline: "wiggly"}, "baseline"},
		{Choices{DriftShape: model.DriftJumps}, "drift-shape"}, {Choices{Drift: []string{"all"}, DriftShape: "wiggly"}, "drift-shape"}} {
		_, err := c.ch.Options(sc)
		var ce *ChoiceError
		if !errors.As(err, &ce) || ce.Flag != c.flag {
			t.Errorf("%+v: error %v, want a --%s error", c.ch, err, c.flag)
		}
	}
}
