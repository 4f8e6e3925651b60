package soundcard

import (
	"fmt"
	"strconv"
	"strings"
	"text/tabwriter"
)

// StandardRatesHz are the sample rates ListDevices probes each device for.
var standardRatesHz = [...]float64{44100, 48000, 88200, 96000, 176400, 192000}

// Device is one PortAudio device as ListDevices reports it.
type Device struct {
	Index         int       // PortAudio's device index (what DeviceRef takes)
	Name          string    // the device's name
	HostAPI       string    // the host API it belongs to, e.g. "ALSA"
	MaxInputs     int       // input channels it offers
	MaxOutputs    int       // output channels it offers
	DefaultRateHz float64   // its default sample rate, hertz
	RatesHz       []float64 // the standard rates 44.1–192 kHz it accepted when probed (nil when not probed)
	DefaultInput  bool      // it is the system's default input
	DefaultOutput bool      // it is the system's default output
}

// FormatDevices renders devices as an aligned table, one per line, for
// error messages and a device listing.
func FormatDevices(devs []Device) string {
	var b strings.Builder
	w := tabwriter.NewWriter(&b, 0, 4, 2, ' ', 0)
	fmt.Fprintln(w, "  index\tname\thost\tinputs\toutputs\tdefault rate\trates accepted")
	for _, d := range devs {
		mark := ""
		switch {
		case d.DefaultInput && d.DefaultOutput:
			mark = " (default in+out)"
		case d.DefaultInput:
			mark = " (default in)"
		case d.DefaultOutput:
			mark = " (default out)"
		}
		fmt.Fprintf(w, "  %d\t%s%s\t%s\t%d\t%d\t%g Hz\t%s\n", d.Index, d.Name, mark, d.HostAPI,
			d.MaxInputs, d.MaxOutputs, d.DefaultRateHz, formatRates(d.RatesHz))
	}
	w.Flush()
	return strings.TrimRight(b.String(), "\n")
}

func formatRates(r []float64) string {
	if r == nil {
		return "-"
	}
	if len(r) == 0 {
		return "none"
	}
	parts := make([]string, len(r))
	for i, v := range r {
		parts[i] = strconv.FormatFloat(v/1000, 'g', -1, 64) + "k"
	}
	return strings.Join(parts, " ")
}

// pickDevice finds ref among devs for one direction. dir is "input" or
// "output"; need is the number of channels the configuration uses in that
// direction. ref "" picks the device marked default for dir.
func pickDevice(devs []Device, ref DeviceRef, dir string, need int) (Device, error) {
	fail := func(problem string) (Device, error) {
		return Device{}, &DeviceError{Dir: dir, Asked: string(ref), Problem: problem, Available: devs}
	}
	channels := func(d Device) int {
		if dir == "input" {
			return d.MaxInputs
		}
		return d.MaxOutputs
	}
	var found []Device
	switch i, isIndex := ref.Index(); {
	case ref == "":
		for _, d := range devs {
			if (dir == "input" && d.DefaultInput) || (dir == "output" && d.DefaultOutput) {
				found = append(found, d)
			}
		}
		if len(found) == 0 {
			return fail("there is no default " + dir + " device; name one in the rig file")
		}
	case isIndex:
		for _, d := range devs {
			if d.Index == i {
				found = append(found, d)
			}
		}
		if len(found) == 0 {
			return fail("no device has index " + strconv.Itoa(i))
		}
	default:
		for _, d := range devs {
			if d.Name == string(ref) {
				found = append(found, d)
			}
		}
		if len(found) == 0 {
			low := strings.ToLower(string(ref))
			for _, d := range devs {
				if strings.Contains(strings.ToLower(d.Name), low) {
					found = append(found, d)
				}
			}
		}
		if len(found) == 0 {
			return fail("no device has that name")
		}
		if len(found) > 1 {
			names := make([]string, len(found))
			for i, d := range found {
				names[i] = strconv.Quote(d.Name) + " (" + strconv.Itoa(d.Index) + ")"
			}
			return fail("the name fits " + strings.Join(names, ", ") + "; give the full name or the index")
		}
	}
	d := found[0]
	if c := channels(d); c < need {
		return fail(fmt.Sprintf("%q has %d %s channels, the configuration needs %d (channels are 0-based)", d.Name, c, dir, need))
	}
	return d, nil
}
