package estimate_test

import (
	"fmt"
	"log"

	"rigwire/estimate"
	"rigwire/profiles"
)

// Predict says what theory expects of a loop over its network: whether it
// is mean-square stable and, if so, the steady second moment of the
// tracking error E[eᵀe], and the extra loss the loop can take before it is
// not. The loop is the belt-speed loop of a parcel conveyor (a scenario of
// our own, in profiles/examples): a PI controller closing over a switch
// that congests now and then. Values are rounded so that the printout does
// not depend on the platform's last bits.
func ExamplePredict() {
	loop, err := profiles.LoadLoop("../profiles/examples/loops/conveyor.yaml")
	if err != nil {
		log.Fatal(err)
	}
	pred, err := estimate.Predict(loop, estimate.PredictOptions{})
	if err != nil {
		log.Fatal(err)
	}
	fmt.Println("verdict:", estimate.VerdictOf(pred))
	fmt.Printf("spectral radius: %.3f\n", pred.SpectralRadius)
	fmt.Printf("E[eᵀe]: %.3g\n", pred.Error.SecondMoment)
	fmt.Printf("loss margin: %.2f\n", pred.LossMargin)
	// Output:
	// verdict: stable
	// spectral radius: 0.878
	// E[eᵀe]: 0.00097
	// loss margin: 0.79
}
