package ols_test

import (
	"fmt"

	"gonum.org/v1/gonum/mat"

	"spillway/mediation/ols"
)

func ExampleSolve() {
	// A straight line with small errors.
	x := mat.NewDense(4, 2, []float64{1, 0, 1, 1, 1, 2, 1, 3})
	y := []float64{1.1, 2.9, 5.1, 6.9}
	fit, err := ols.Solve(x, y)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("coef %.4g, se %.4g, R² %.4g\n", fit.Coef, fit.SE, fit.R2)

	// A copy of the slope column is reported by index.
	dup := mat.NewDense(4, 3, []float64{1, 0, 0, 1, 1, 1, 1, 2, 2, 1, 3, 3})
	_, err = ols.Solve(dup, y)
	fmt.Println(err)
	// Output:
	// coef [1.06 1.96], se [0.1058 0.05657], R² 0.9983
	// ols: rank deficient: column 2 is zero or a linear combination of the columns before it
}
