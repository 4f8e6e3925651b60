package main

import (
	"errors"
	"strings"
	"testing"

	"github.com/sweeplock/sweeplock/acquire/serialadc"
	"github.com/sweeplock/sweeplock/acquire/soundcard"
)

// The device list shows each port with its USB details, always says how
// to name a port that is not listed, and passes on why sound devices could
// not be listed (a build without sound card support) instead of a list.
func TestWriteDevices(t *testing.T) {
	usb := serialadc.PortInfo{Path: "/dev/ttyACM0", USB: true, VID: "2341", PID: "0043", Product: "Uno", Manufacturer: "Arduino", Serial: "7543"}
	card := soundcard.Device{Index: 3, Name: "USB Audio", HostAPI: "ALSA", MaxInputs: 2, MaxOutputs: 2, DefaultRateHz: 48000, DefaultInput: true}
	cases := []struct {
		name  string
		ports []serialadc.PortInfo
		perr  error
		devs  []soundcard.Device
		derr  error
		want  []string
	}{
		{"ports, no sound support", []serialadc.PortInfo{usb, {Path: "/dev/ttyS0"}}, nil, nil, soundcard.ErrNotBuilt,
			[]string{usb.String(), "\n  /dev/ttyS0\n", serialadc.PortHint, soundcard.ErrNotBuilt.Error()}},
		{"nothing found", nil, nil, nil, nil, []string{"  none found\n", serialadc.PortHint, "none found (is a sound server running?)"}},
		{"listing fails", nil, errors.New("serialadc: listing serial ports: boom"), []soundcard.Device{card}, nil,
			[]string{"cannot list them: serialadc: listing serial ports: boom", serialadc.PortHint, soundcard.FormatDevices([]soundcard.Device{card})}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var b strings.Builder
			writeDevices(&b, tc.ports, tc.perr, tc.devs, tc.derr)
			for _, w := range tc.want {
				if !strings.Contains(b.String(), w) {
					t.Errorf("output lacks %q:\n%s", w, b.String())
				}
			}
		})
	}
}
