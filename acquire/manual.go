package acquire

import (
	"context"
	"fmt"
	"math"
	"sync"
)

// ManualSetting is what a ManualDrive asks the person at the generator to
// set: a frequency in hertz and an amplitude in drive units. Gen counts the
// requests, so a screen that polls Setting can tell a new one from the last.
type ManualSetting struct {
	FreqHz float64
	Amp    float64
	Gen    uint64
}

var _ Drive = (*ManualDrive)(nil)

// ManualDrive is an external generator that a person sets by hand (the rig
// file's drive = "manual"). The tool neither makes nor hears the drive: Set
// records the frequency and amplitude asked for and tells whoever watches
// (the screen, the headless sweep) through the notify function given to
// NewManualDrive, so they can prompt the person; Amp reports the amplitude
// last asked for. It is not coherent: the runner cannot choose exact
// frequencies for it, and sources read with it carry no drive phase.
//
// Safety: the limit is enforced on every request (above it Set refuses
// with ErrDriveLimit and asks for nothing), and Off asks for amplitude 0,
// which the prompt must tell the person to reach by turning the generator
// down gradually, not by switching it off at a jump.
type ManualDrive struct {
	unit   string
	maxAmp float64
	notify func(ManualSetting)

	mu  sync.Mutex
	cur ManualSetting
}

// NewManualDrive makes a manual drive with the rig's drive unit and limit
// (maxAmp > 0, in drive units). notify, when not nil, is called from the
// caller of Set and Off with each new request; it must return quickly and
// must not call back into the drive.
func NewManualDrive(unit string, maxAmp float64, notify func(ManualSetting)) (*ManualDrive, error) {
	if !(maxAmp > 0) || math.IsInf(maxAmp, 0) {
		return nil, fmt.Errorf("acquire: manual drive limit %g %s: give the generator's limit, a positive number", maxAmp, unit)
	}
	return &ManualDrive{unit: unit, maxAmp: maxAmp, notify: notify}, nil
}

// Info describes the drive: kind "manual", its unit and limit, not coherent.
func (d *ManualDrive) Info() DriveInfo {
	return DriveInfo{Kind: "manual", Unit: d.unit, MaxAmp: d.maxAmp, Coherent: false}
}

// Set records the request (freqHz > 0 and finite; 0 ≤ amp ≤ the limit)
// and passes it to notify. An amplitude above the limit returns an error
// wrapping ErrDriveLimit and changes nothing.
func (d *ManualDrive) Set(freqHz, amp float64) error {
	switch {
	case !(freqHz > 0) || math.IsInf(freqHz, 0):
		return fmt.Errorf("acquire: manual drive frequency %g Hz: must be a positive number of hertz", freqHz)
	case math.IsNaN(amp) || amp < 0:
		return fmt.Errorf("acquire: manual drive amplitude %g %s: must be 0 or more", amp, d.unit)
	case amp > d.maxAmp:
		return fmt.Errorf("%w: %g %s asked of the generator, the rig's limit is %g %s", ErrDriveLimit, amp, d.unit, d.maxAmp, d.unit)
	}
	d.request(freqHz, amp)
	return nil
}

// Off asks for amplitude 0 at the present frequency and returns at once:
// the tool cannot wait for a generator it does not hear.
func (d *ManualDrive) Off(ctx context.Context) error {
	d.mu.Lock()
	f, a := d.cur.FreqHz, d.cur.Amp
	d.mu.Unlock()
	if a == 0 {
		return nil // already asked to be off (or never on)
	}
	d.request(f, 0)
	return nil
}

// Amp returns the amplitude last asked for, in drive units.
func (d *ManualDrive) Amp() float64 {
	d.mu.Lock()
	defer d.mu.Unlock()
	return d.cur.Amp
}

// Setting returns the latest request.
func (d *ManualDrive) Setting() ManualSetting {
	d.mu.Lock()
	defer d.mu.Unlock()
	return d.cur
}

func (d *ManualDrive) request(freqHz, amp float64) {
	d.mu.Lock()
	d.cur = ManualSetting{FreqHz: freqHz, Amp: amp, Gen: d.cur.Gen + 1}
	s := d.cur
	d.mu.Unlock()
	if d.notify != nil {
		d.notify(s)
	}
}
