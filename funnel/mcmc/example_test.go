package mcmc_test

import (
	"context"
	"fmt"

	"spillway/funnel/mcmc"
)

// ExampleRun samples a bivariate normal with standard deviations 1 and 3 and
// correlation 0.95, then summarises and judges the fit.
func ExampleRun() {
	fit, err := mcmc.Run(context.Background(), correlated2{1, 3, 0.95}, &mcmc.Settings{Seed: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, s := range mcmc.Summarize(fit) {
		fmt.Printf("%s: sd %.0f, rhat below 1.01: %v\n", s.Parameter, s.SD, s.Rhat < 1.01)
	}
	fmt.Println("draws:", fit.NumDraws())
	fmt.Println("trustworthy:", mcmc.Judge(fit, mcmc.Summarize(fit)).Trustworthy)
	// Output:
	// a: sd 1, rhat below 1.01: true
	// b: sd 3, rhat below 1.01: true
	// draws: 4000
	// trustworthy: true
}
