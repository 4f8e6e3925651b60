package lockin

import (
	"errors"
	"testing"
	"time"
)

func TestParseHarmonic(t *testing.T) {
	cases := []struct {
		in    string
		want  Harmonic
		str   string
		ratio float64
		err   bool
	}{
		{in: "1", want: Harmonic{1, 1}, str: "1", ratio: 1},
		{in: "3", want: Harmonic{3, 1}, str: "3", ratio: 3},
		{in: "1/2", want: Harmonic{1, 2}, str: "1/2", ratio: 0.5},
		{in: " 1 / 3 ", want: Harmonic{1, 3}, str: "1/3", ratio: 1.0 / 3},
		{in: "2/4", want: Harmonic{1, 2}, str: "1/2", ratio: 0.5},
		{in: "6/3", want: Harmonic{2, 1}, str: "2", ratio: 2},
		{in: "3/2", want: Harmonic{3, 2}, str: "3/2", ratio: 1.5},
		{in: "64", want: Harmonic{64, 1}, str: "64", ratio: 64},
		{in: "0", err: true},
		{in: "-1", err: true},
		{in: "65", err: true},
		{in: "1/0", err: true},
		{in: "1/17", err: true},
		{in: "x", err: true},
		{in: "1/2/3", err: true},
		{in: "", err: true},
		{in: "1.5", err: true},
	}
	for _, tc := range cases {
		h, err := ParseHarmonic(tc.in)
		if tc.err {
			if !errors.Is(err, ErrHarmonic) {
				t.Errorf("ParseHarmonic(%q) = %v, %v; want an ErrHarmonic", tc.in, h, err)
			}
			continue
		}
		if err != nil || h != tc.want {
			t.Errorf("ParseHarmonic(%q) = %v, %v; want %v", tc.in, h, err, tc.want)
			continue
		}
		if h.String() != tc.str || h.Ratio() != tc.ratio {
			t.Errorf("%v: String %q Ratio %g, want %q %g", h, h.String(), h.Ratio(), tc.str, tc.ratio)
		}
	}
	d := Default()
	d[0] = Harmonic{9, 1}
	if Default()[0] != (Harmonic{1, 1}) {
		t.Error("Default returns shared storage")
	}
}

func TestModeString(t *testing.T) {
	for _, m := range []Mode{Sync, LowPass} {
		got, err := ParseMode(m.String())
		if err != nil || got != m {
			t.Errorf("ParseMode(%q) = %v, %v", m.String(), got, err)
		}
	}
	if _, err := ParseMode("fast"); !errors.Is(err, ErrConfig) {
		t.Errorf("ParseMode(fast): %v", err)
	}
	if Mode(7).String() != "Mode(7)" {
		t.Errorf("Mode(7).String() = %q", Mode(7).String())
	}
}

func TestConfig(t *testing.T) {
	ok := Config{Cycles: 10, RateHz: 48000}
	lp := Config{Mode: LowPass, Order: 2, TimeConstant: time.Millisecond, RateHz: 48000}
	many := make([]Harmonic, MaxHarmonics+1)
	for i := range many {
		many[i] = Harmonic{i + 1, 1}
	}
	cases := []struct {
		name   string
		cfg    func() Config
		err    error
		cycles int
	}{
		{"defaults", func() Config { return ok }, nil, 10},
		{"lowpass", func() Config { return lp }, nil, 0},
		{"cycles rounded for 1/2", func() Config { c := ok; c.Cycles = 3; c.Harmonics = []Harmonic{{1, 1}, {1, 2}}; return c }, nil, 4},
		{"cycles rounded for 1/2 and 1/3", func() Config {
			c := ok
			c.Cycles = 7
			c.Harmonics = []Harmonic{{1, 2}, {1, 3}}
			return c
		}, nil, 12},
		{"no rate", func() Config { c := ok; c.RateHz = 0; return c }, ErrConfig, 0},
		{"no cycles", func() Config { c := ok; c.Cycles = 0; return c }, ErrConfig, 0},
		{"channels", func() Config { c := ok; c.Channels = -1; return c }, ErrConfig, 0},
		{"order 0", func() Config { c := lp; c.Order = 0; return c }, ErrConfig, 0},
		{"order 5", func() Config { c := lp; c.Order = 5; return c }, ErrConfig, 0},
		{"no time constant", func() Config { c := lp; c.TimeConstant = 0; return c }, ErrConfig, 0},
		{"mode", func() Config { c := ok; c.Mode = 9; return c }, ErrConfig, 0},
		{"empty harmonics", func() Config { c := ok; c.Harmonics = []Harmonic{}; return c }, ErrConfig, 0},
		{"too many harmonics", func() Config { c := ok; c.Harmonics = many; return c }, ErrConfig, 0},
		{"duplicate", func() Config { c := ok; c.Harmonics = []Harmonic{{1, 2}, {2, 4}}; return c }, ErrHarmonic, 0},
		{"bad harmonic", func() Config { c := ok; c.Harmonics = []Harmonic{{0, 1}}; return c }, ErrHarmonic, 0},
		{"lcm too large", func() Config {
			c := ok
			c.Harmonics = []Harmonic{{1, 16}, {1, 9}, {1, 5}}
			return c
		}, ErrHarmonic, 0},
	}
	for _, tc := range cases {
		l, err := New(tc.cfg())
		if tc.err != nil {
			if !errors.Is(err, tc.err) || l != nil {
				t.Errorf("%s: New = %v, %v; want %v", tc.name, l, err, tc.err)
			}
			continue
		}
		if err != nil {
			t.Errorf("%s: %v", tc.name, err)
			continue
		}
		if got := l.Config().Cycles; got != tc.cycles {
			t.Errorf("%s: Cycles %d, want %d", tc.name, got, tc.cycles)
		}
	}
}

// TestPushPanics checks the documented panics on size mismatches.
func TestPushPanics(t *testing.T) {
	l, _ := New(Config{Channels: 2, Cycles: 1, RateHz: 1000})
	for _, tc := range []struct {
		name     string
		x, tt, p []float64
	}{
		{"samples", make([]float64, 3), nil, make([]float64, 2)},
		{"times", make([]float64, 4), make([]float64, 1), make([]float64, 2)},
	} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: no panic", tc.name)
				}
			}()
			l.Push(tc.x, tc.tt, tc.p)
		}()
	}
}
