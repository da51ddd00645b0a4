package pipeline

import (
	"context"
	"os"
	"testing"

	"spillway/funnel/data"
	"spillway/funnel/mcmc"
	"spillway/funnel/model"
	"spillway/funnel/scenario"
)

func TestZZDefaultDivergences(t *testing.T) {
	if os.Getenv("ZZDIAG") == "" {
		t.Skip()
	}
	ds, err := data.Load("../../testdata/demo/data.csv", scenario.Spec)
	if err != nil {
		t.Fatal(err)
	}
	sc := model.Scale(ds.National(), ds.Spec)
	f, err := Fit(context.Background(), sc, model.Options{}, mcmc.Settings{Seed: 1}, nil)
	if err != nil {
		t.Fatal(err)
	}
	for k, fit := range f.Fits {
		d := 0
		for _, c := range fit.Chains {
			d += c.Stats.Divergences
		}
		t.Logf("default fit seed 1, stage %d: %d divergences", k, d)
	}
}
