package main

import (
	"context"
	"fmt"
	"os"
	"path/filepath"

	"github.com/sweeplock/sweeplock/acquire/rig"
	"github.com/sweeplock/sweeplock/acquire/soundcard"
)

// calibrateCmd measures a sound card's own response with its output wired
// to its input and writes it beside the rig file.
type calibrateCmd struct {
	Rig       string  `help:"Rig file (TOML) with source = \"soundcard\"." required:"" placeholder:"FILE"`
	Out       string  `help:"Calibration file to write (JSON). Default: the file the rig's [soundcard] calibration key names, else FILE-card-cal.json beside the rig." placeholder:"CAL.json"`
	Level     float64 `help:"Drive level in full-scale units (default 0.25, or the rig's limit if lower)." placeholder:"LEVEL"`
	PerOctave int     `name:"per-octave" help:"Frequencies per octave of the grid." default:"6" placeholder:"N"`
}

func (c *calibrateCmd) Run(ctx context.Context) error {
	f, _, err := rig.Load(c.Rig)
	if err != nil {
		return rigError(err)
	}
	if f.Source != "soundcard" || f.Soundcard == nil {
		return misuse("%s has source = %q: calibrate measures a sound card; give a rig with source = \"soundcard\"", c.Rig, f.Source)
	}
	if c.PerOctave < 1 {
		return misuse("--per-octave %d: give 1 or more", c.PerOctave)
	}
	cfg := *f.Soundcard
	level := c.Level
	if level == 0 {
		level = min(0.25, cfg.MaxLevel)
	}
	if level < 0 || level > cfg.MaxLevel {
		return misuse("--level %g: must be above 0 and at most the rig's limit %g (max_level / max_amplitude)", level, cfg.MaxLevel)
	}
	plan, err := f.AcquirePlan()
	if err != nil {
		return rigError(err)
	}
	hs, err := f.HarmonicList()
	if err != nil {
		return rigError(err)
	}
	out := c.Out
	switch {
	case out != "":
	case f.SoundcardCal != "":
		out = rig.CalPath(c.Rig, f.SoundcardCal)
	default:
		out = rig.DefaultCalPath(c.Rig)
	}
	freqs := rig.CalFreqs(plan, hs, cfg.RateHz, c.PerOctave)
	card, err := soundcard.Open(cfg, soundcard.Options{})
	if err != nil {
		return err
	}
	defer card.Close()
	fmt.Fprintf(os.Stderr, "sweeplock: calibrating %q: its output must be wired straight to input %d (no amplifier, no resonator); %d frequencies from %.4g to %.4g Hz at level %g\n",
		card.Source().Info().Name, cfg.ResponseChannel, len(freqs), freqs[0], freqs[len(freqs)-1], level)
	cal, err := rig.MeasureCard(ctx, card, freqs, rig.CalOptions{LevelFS: level, Progress: os.Stdout, Rig: c.Rig})
	if err != nil {
		return err
	}
	if err := rig.WriteCardCal(out, cal); err != nil {
		return err
	}
	fmt.Printf("card delay %.6f s (PortAudio reports %.6f s); wrote %s\n", cal.DelayS, cal.ReportedLatencyS, out)
	if f.SoundcardCal == "" {
		fmt.Printf("to use it, add under [soundcard] in %s:  calibration = %q\n", c.Rig, relTo(c.Rig, out))
	}
	if cfg.ReferenceChannel >= 0 {
		fmt.Printf("note: this rig has a reference (input %d), so its sweeps take the response as a ratio to it and do not apply the calibration; it applies with reference_channel = -1\n", cfg.ReferenceChannel)
	}
	return nil
}

// relTo returns p relative to the rig file's folder (how the rig file
// names it), or p itself when that cannot be done.
func relTo(rigPath, p string) string {
	if r, err := filepath.Rel(filepath.Dir(rigPath), p); err == nil {
		return r
	}
	return p
}
