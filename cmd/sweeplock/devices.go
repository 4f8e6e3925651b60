package main

import (
	"fmt"
	"io"
	"os"

	"github.com/sweeplock/sweeplock/acquire/serialadc"
	"github.com/sweeplock/sweeplock/acquire/soundcard"
)

// devicesCmd lists the serial ports and sound devices a rig file can name.
type devicesCmd struct{}

func (devicesCmd) Run() error {
	ports, perr := serialadc.ListPorts()
	devs, derr := soundcard.ListDevices()
	writeDevices(os.Stdout, ports, perr, devs, derr)
	return nil
}

// writeDevices prints the two lists; a list that could not be made is
// replaced by the reason.
func writeDevices(w io.Writer, ports []serialadc.PortInfo, perr error, devs []soundcard.Device, derr error) {
	fmt.Fprintln(w, "Serial ports (for [serial] port):")
	switch {
	case perr != nil:
		fmt.Fprintf(w, "  cannot list them: %v\n", perr)
	case len(ports) == 0:
		fmt.Fprintln(w, "  none found")
	}
	for _, p := range ports {
		fmt.Fprintln(w, "  "+p.String())
	}
	fmt.Fprintln(w, "  Note: "+serialadc.PortHint+".")
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Sound devices:")
	switch {
	case derr != nil:
		fmt.Fprintf(w, "  %v\n", derr)
	case len(devs) == 0:
		fmt.Fprintln(w, "  none found (is a sound server running?)")
	default:
		fmt.Fprintln(w, soundcard.FormatDevices(devs))
	}
}
