package transform_test

import (
	"fmt"

	"spillway/funnel/transform"
)

// A one-week burst of spend carries over into later weeks: with a half-life
// of two weeks, the weight halves every two weeks.
func ExampleAdstock() {
	lam := transform.HalfLifeToRetention(2)
	a := transform.Adstock(nil, []float64{1, 0, 0, 0, 0}, lam)
	fmt.Printf("%.4g\n", a)
	fmt.Printf("H(K) = %.4g\n", transform.Hill(0.8, 0.8, 2.5))
	// Output:
	// [0.2929 0.2071 0.1464 0.1036 0.07322]
	// H(K) = 0.5
}
