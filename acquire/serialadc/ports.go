package serialadc

import (
	"fmt"

	"go.bug.st/serial/enumerator"
)

// PortHint tells a person how to name a port that ListPorts does not show.
const PortHint = `a port that is not listed (a pseudo-terminal such as /dev/pts/3, a symlink, or a board not yet enumerated) can still be given by its path, e.g. port = "/dev/ttyACM0"`

// PortInfo describes a serial port found on the system.
type PortInfo struct {
	Path         string // device path, e.g. /dev/ttyACM0
	USB          bool   // a USB serial device; the fields below are filled
	VID, PID     string // USB vendor and product IDs, 4 hex digits, upper case
	Serial       string // USB serial number, "" when the device has none
	Manufacturer string
	Product      string
}

// String is a one-line description for a list of ports.
func (p PortInfo) String() string {
	if !p.USB {
		return p.Path
	}
	s := fmt.Sprintf("%s  USB %s:%s", p.Path, p.VID, p.PID)
	if p.Product != "" {
		s += "  " + p.Product
	}
	if p.Manufacturer != "" {
		s += " (" + p.Manufacturer + ")"
	}
	if p.Serial != "" {
		s += "  serial " + p.Serial
	}
	return s
}

// ListPorts lists the serial ports the system knows, with USB details where
// it has them. Pseudo-terminals are never listed; see PortHint.
func ListPorts() ([]PortInfo, error) {
	ports, err := enumerator.GetDetailedPortsList()
	if err != nil {
		return nil, fmt.Errorf("serialadc: listing serial ports: %w", err)
	}
	out := make([]PortInfo, 0, len(ports))
	for _, p := range ports {
		if p == nil || p.Name == "" {
			continue
		}
		out = append(out, portInfo(p))
	}
	return out, nil
}

func portInfo(p *enumerator.PortDetails) PortInfo {
	return PortInfo{
		Path:         p.Name,
		USB:          p.IsUSB,
		VID:          p.VID,
		PID:          p.PID,
		Serial:       p.SerialNumber,
		Manufacturer: p.Manufacturer,
		Product:      p.Product,
	}
}
