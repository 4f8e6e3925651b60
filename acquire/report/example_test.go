package report_test

import (
	"fmt"

	"github.com/sweeplock/sweeplock/acquire/report"
)

func ExampleFormatUncertain() {
	fmt.Println(report.FormatUncertain(37.999528, 0.000048))
	fmt.Println(report.FormatUncertain(2.25826e7, 1.3e3))
	// Output:
	// 37.999528 ± 0.000048
	// (2.25826 ± 0.00013)e+07
}

// Fit a record of the simulated demo strip and compare with the rig's
// true values (kept in the record's sidecar).
func ExampleAnalyze() {
	run, err := report.Open("../../testdata/records/demo-0.2.csv")
	if err != nil {
		fmt.Println(err)
		return
	}
	rep, err := report.Analyze(run, report.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	p, _, q, _ := rep.Best()
	fmt.Printf("f0 %.2f Hz, Q %.1f, beta %.3g %s (%s)\n", p.F0Hz, q, p.Beta, "mm⁻²s⁻²", rep.Fit.Stiffness)
	fmt.Printf("rig's truth: f0 %.2f Hz, Q %.1f, beta %.3g\n", run.Truth.F0Hz, run.Truth.Q(), run.Truth.Beta)
	// Output:
	// f0 38.00 Hz, Q 60.0, beta -2e+04 mm⁻²s⁻² (softening)
	// rig's truth: f0 38.00 Hz, Q 60.0, beta -2e+04
}
