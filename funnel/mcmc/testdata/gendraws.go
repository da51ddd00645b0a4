//go:build ignore

// gendraws writes own_draws.csv and tiny_draws.csv, the draw matrices whose
// diagnostics posterior.R computes with R posterior. Run from funnel/mcmc:
//
//	go run testdata/gendraws.go
//
// Every value is a multiple of 2^-10 below 2^20 in magnitude, so its
// shortest decimal form has at most 17 significant digits and both Go and
// R read it back exactly.
package main

import (
	"log"
	"math"
	"math/rand/v2"
	"os"

	"gonum.org/v1/gonum/mat"

	"spillway/funnel/mcmc"
)

func quantize(v float64) float64 { return math.Round(v*1024) / 1024 }

func main() {
	const chains, iters = 4, 501 // odd: the split drops the middle draw
	names := []string{"ar09", "shifted", "wide_chain", "cauchy", "counts", "antithetic", "constant"}
	rng := rand.New(rand.NewPCG(20240601, 7))
	fit := &mcmc.Fit{Names: names}
	for c := 0; c < chains; c++ {
		d := mat.NewDense(iters, len(names), nil)
		var ar, sh, anti float64
		for i := 0; i < iters; i++ {
			ar = 0.9*ar + rng.NormFloat64()
			sh = 0.5*sh + rng.NormFloat64()
			shift := 0.0
			if c == 3 {
				shift = 0.6 // one chain off-centre: R-hat above 1.01
			}
			scale := 1.0
			if c == 1 {
				scale = 3 // one chain wider: the folded R-hat sees it
			}
			anti = -0.6*anti + rng.NormFloat64()
			// Poisson(2) by inversion: many ties.
			k, p, u := 0, math.Exp(-2), rng.Float64()
			cdf := p
			for u > cdf {
				k++
				p *= 2 / float64(k)
				cdf += p
			}
			row := []float64{
				ar,
				sh + shift,
				scale * rng.NormFloat64(),
				math.Tan(math.Pi * (rng.Float64() - 0.5)),
				float64(k),
				anti,
				1.5,
			}
			for j, v := range row {
				v = quantize(v)
				if math.Abs(v) >= 1<<20 {
					v = math.Copysign(1<<20-1, v)
				}
				d.Set(i, j, v)
			}
		}
		fit.Chains = append(fit.Chains, mcmc.Chain{Draws: d})
	}
	write("own_draws.csv", fit)

	// The hand fixture of REFERENCES.md section 5: two chains of 12 and the
	// same with chain 2 shifted by 3.
	c1 := []float64{3, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5, 8}
	c2 := []float64{9, 7, 9, 3, 2, 3, 8, 4, 6, 2, 6, 4}
	tiny := &mcmc.Fit{Names: []string{"x", "x_shift"}}
	for c, ch := range [][]float64{c1, c2} {
		d := mat.NewDense(len(ch), 2, nil)
		for i, v := range ch {
			d.Set(i, 0, v)
			if c == 1 {
				v += 3
			}
			d.Set(i, 1, v)
		}
		tiny.Chains = append(tiny.Chains, mcmc.Chain{Draws: d})
	}
	write("tiny_draws.csv", tiny)
}

func write(name string, f *mcmc.Fit) {
	out, err := os.Create("testdata/" + name)
	if err != nil {
		log.Fatal(err)
	}
	if err := mcmc.WriteDraws(out, f); err != nil {
		log.Fatal(err)
	}
	if err := out.Close(); err != nil {
		log.Fatal(err)
	}
}
