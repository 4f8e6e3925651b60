package report

import (
	"bytes"
	"encoding/json"
	"math"
	"strings"
	"testing"
)

// The table names each parameter with its unit from the record's header
// (mm here), both fits and the rig's true values, the stiffness, the
// predicted and measured jumps and the band.
func TestWriteText(t *testing.T) {
	rep := analyze(t, "demo-0.2")
	var b bytes.Buffer
	if err := rep.WriteText(&b); err != nil {
		t.Fatal(err)
	}
	out := b.String()
	for _, want := range []string{
		"demo-0.2.csv", "drive 0.2 A", "first order", "with 3rd harmonic", "rig's true value",
		"  f0 ", "  zeta ", "  Q ", "  beta ", "mm⁻²s⁻²", "  F ", "mm/s²", "residual rms",
		"softening", "up-sweep, jump up", "down-sweep, jump down", "bistable band", "between",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("table lacks %q:\n%s", want, out)
		}
	}
	// The best f0 appears with its uncertainty as FormatUncertain gives it.
	c := rep.Corrected
	if s := FormatUncertain(c.Params.F0Hz, c.StdErr.F0Hz); !strings.Contains(out, s) {
		t.Errorf("table lacks f0 %q", s)
	}
	for _, line := range strings.Split(out, "\n") {
		if strings.HasSuffix(line, " ") {
			t.Errorf("trailing space in %q", line)
		}
	}
}

// The JSON carries the same numbers, and unknown ones as null.
func TestWriteJSON(t *testing.T) {
	rep := analyze(t, "hard-0.1") // no hysteresis: the jumps are null
	var b bytes.Buffer
	if err := rep.WriteJSON(&b); err != nil {
		t.Fatal(err)
	}
	var j JSON
	if err := json.Unmarshal(b.Bytes(), &j); err != nil {
		t.Fatalf("%v\n%s", err, b.String())
	}
	c := rep.Corrected
	check := func(name string, got *float64, want float64) {
		t.Helper()
		if got == nil || *got != want {
			t.Errorf("%s = %v, want %v", name, got, want)
		}
	}
	check("with_third_harmonic.f0_hz.value", j.Corrected.F0Hz.Value, c.Params.F0Hz)
	check("with_third_harmonic.beta.std", j.Corrected.Beta.Std, c.StdErr.Beta)
	check("first_order.zeta.value", j.FirstOrder.Zeta.Value, rep.Fit.Params.Zeta)
	check("rig_true_values.force.value", j.Truth.Force.Value, rep.Run.Truth.Force)
	if j.Truth.Force.Std != nil {
		t.Error("the true value has an uncertainty")
	}
	if j.UpSweep.PredictedHz != nil || j.Band != nil || j.UpSweep.Seen {
		t.Errorf("jumps for a record without hysteresis: %+v %v", j.UpSweep, j.Band)
	}
	if j.Units.Beta != "1/(mm^2 s^2)" || j.Units.Force != "mm/s^2" || j.Best != "with_third_harmonic" || j.Stiffness != "hardening" {
		t.Errorf("units %+v best %q stiffness %q", j.Units, j.Best, j.Stiffness)
	}
	if j.Points.Logged != len(rep.Run.Record.Points) || j.Points.Fitted != rep.Fit.Used {
		t.Errorf("points %+v", j.Points)
	}
	if !strings.Contains(b.String(), `"predicted_hz": null`) {
		t.Error("a missing prediction is not written as null")
	}
	if num(math.NaN()) != nil || num(math.Inf(1)) != nil {
		t.Error("num keeps NaN or Inf")
	}
}
