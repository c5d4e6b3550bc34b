package engine_test

import (
	"fmt"
	"log"
	"time"

	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// A Monitor decodes the rig's sensor datagrams with the loop's decode
// section, forms the tracking error and compares its measured second
// moment with the prediction. Here it measures the conveyor loop of
// profiles/examples, whose datagrams are "seq,t_k,y" in text; in a run
// the relay's tap or a UDP socket (Serve) feeds it. Six datagrams are far
// too few to judge, so the verdict is inconclusive, with the reason. A
// datagram that does not decode is counted under its reason, never
// estimated.
func ExampleMonitor_Feed() {
	loop, err := profiles.LoadLoop("../../profiles/examples/loops/conveyor.yaml")
	if err != nil {
		log.Fatal(err)
	}
	// pred nil: New computes the prediction itself.
	m, err := engine.New(loop, nil, engine.Options{})
	if err != nil {
		log.Fatal(err)
	}
	start := time.Date(2024, 6, 11, 8, 0, 0, 0, time.UTC)
	for i, text := range []string{
		"0,0.00,1.19",
		"1,0.02,1.23",
		"2,0.04,1.18",
		"3,0.06,belt", // not a number: a decode failure
		"4,0.08,1.21",
		"5,0.10,1.20",
	} {
		m.Feed([]byte(text), start.Add(time.Duration(i)*20*time.Millisecond))
	}
	s := m.Summary()
	fmt.Println("datagrams:", s.Datagrams)
	fmt.Println("samples:", s.Samples)
	fmt.Println("not a number:", s.DecodeFailures["not_a_number"])
	fmt.Printf("predicted E[eᵀe]: %.3g\n", *s.PredictedSecondMoment)
	fmt.Println("verdict:", s.Verdict)
	fmt.Println("because:", s.VerdictReason)
	// Output:
	// datagrams: 6
	// samples: 5
	// not a number: 1
	// predicted E[eᵀe]: 0.00097
	// verdict: inconclusive
	// because: only 5 judged samples, want ≥ 400
}
