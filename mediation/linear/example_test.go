package linear_test

import (
	"fmt"

	"spillway/mediation/linear"
)

func ExampleSobel() {
	// a = 2 (se 0.3), b = 3 (se 0.4): the indirect effect 6 has z ≈ 4.983.
	se, z := linear.Sobel(2, 0.3, 3, 0.4)
	fmt.Printf("se %.4g, z %.4g\n", se, z)
	// Output:
	// se 1.204, z 4.983
}

func ExampleACME() {
	// The mediated effect falls as the error correlation rises and is zero at
	// rho = rhoTilde.
	for _, rho := range []float64{-0.5, 0, 0.3, 0.5} {
		fmt.Printf("rho %4.1f: ACME %.4f\n", rho, linear.ACME(rho, 0.5, 1, 1, 0.3))
	}
	// Output:
	// rho -0.5: ACME 0.4254
	// rho  0.0: ACME 0.1500
	// rho  0.3: ACME 0.0000
	// rho  0.5: ACME -0.1254
}
