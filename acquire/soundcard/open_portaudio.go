//go:build portaudio

package soundcard

import (
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/gordonklaus/portaudio"
)

// Open opens one full-duplex stream on the configured devices and starts
// it: the drive plays (silent until Set) and the source is ready to Start.
//
// It validates cfg first; a missing device, too few channels or a rate the
// devices refuse give a *DeviceError that lists what is available. The
// stream uses PortAudio's high-latency parameters, cfg.Latency of
// buffering and cfg.FramesPerBuffer frames per callback (low latency drops
// audio through a sound server on a busy machine).
func Open(cfg Config, opt Options) (*Card, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	opt = opt.withDefaults(cfg)
	if err := portaudio.Initialize(); err != nil {
		return nil, fmt.Errorf("soundcard: starting PortAudio: %w", err)
	}
	ok := false
	defer func() {
		if !ok {
			portaudio.Terminate()
		}
	}()
	devs, infos, err := listDevices(false)
	if err != nil {
		return nil, err
	}
	inDev, err := pickDevice(devs, cfg.inputDevice(), "input", cfg.inputChannels())
	if err != nil {
		return nil, err
	}
	outDev, err := pickDevice(devs, cfg.outputDevice(), "output", cfg.outputChannels())
	if err != nil {
		return nil, err
	}
	p := portaudio.HighLatencyParameters(infos[inDev.Index], infos[outDev.Index])
	p.Input.Channels = cfg.inputChannels()
	p.Output.Channels = cfg.outputChannels()
	p.SampleRate = cfg.RateHz
	p.FramesPerBuffer = cfg.FramesPerBuffer
	if cfg.Latency > 0 {
		p.Input.Latency = cfg.Latency
		p.Output.Latency = cfg.Latency
	}

	eng := newEngine(cfg, opt.QueueBlocks)
	cb := func(in, out []float32, _ portaudio.StreamCallbackTimeInfo, f portaudio.StreamCallbackFlags) {
		eng.process(in, out, mapFlags(f))
	}
	name := inDev.Name
	if inDev.Index != outDev.Index {
		name = "in " + inDev.Name + ", out " + outDev.Name
	}
	if err := portaudio.IsFormatSupported(p, cb); err != nil {
		var ok []string
		for _, r := range standardRatesHz {
			q := p
			q.SampleRate = r
			if portaudio.IsFormatSupported(q, cb) == nil {
				ok = append(ok, strconv.FormatFloat(r, 'g', -1, 64))
			}
		}
		accepted := "none of " + fmt.Sprint(standardRatesHz)
		if len(ok) > 0 {
			accepted = strings.Join(ok, ", ") + " Hz"
		}
		return nil, &DeviceError{
			Dir:   "input/output",
			Asked: name,
			Problem: fmt.Sprintf("%g Hz with %d input and %d output channels is refused (%v); with these channels it accepts %s",
				cfg.RateHz, p.Input.Channels, p.Output.Channels, err, accepted),
			Available: devs,
		}
	}
	s, err := portaudio.OpenStream(p, cb)
	if err != nil {
		return nil, &DeviceError{Dir: "input/output", Asked: name,
			Problem: fmt.Sprintf("opening a %g Hz stream failed: %v", cfg.RateHz, err), Available: devs}
	}
	ok = true
	return newCard(cfg, opt, eng, &paStream{s: s}, name, func() { portaudio.Terminate() })
}

// ListDevices lists PortAudio's devices with their channels, default rate,
// the standard rates they accept and which are the defaults.
func ListDevices() ([]Device, error) {
	if err := portaudio.Initialize(); err != nil {
		return nil, fmt.Errorf("soundcard: starting PortAudio: %w", err)
	}
	defer portaudio.Terminate()
	devs, _, err := listDevices(true)
	return devs, err
}

// listDevices reads PortAudio's device list; probe asks each device which
// standard rates it accepts. PortAudio must be initialised.
func listDevices(probe bool) ([]Device, []*portaudio.DeviceInfo, error) {
	infos, err := portaudio.Devices()
	if err != nil {
		return nil, nil, fmt.Errorf("soundcard: listing devices: %w", err)
	}
	defIn, defOut := -1, -1
	if d, err := portaudio.DefaultInputDevice(); err == nil {
		defIn = d.Index
	}
	if d, err := portaudio.DefaultOutputDevice(); err == nil {
		defOut = d.Index
	}
	devs := make([]Device, len(infos))
	for i, d := range infos {
		host := ""
		if d.HostApi != nil {
			host = d.HostApi.Name
		}
		devs[i] = Device{
			Index:         d.Index,
			Name:          d.Name,
			HostAPI:       host,
			MaxInputs:     d.MaxInputChannels,
			MaxOutputs:    d.MaxOutputChannels,
			DefaultRateHz: d.DefaultSampleRate,
			DefaultInput:  d.Index == defIn,
			DefaultOutput: d.Index == defOut,
		}
		if probe {
			devs[i].RatesHz = probeRates(d)
		}
	}
	return devs, infos, nil
}

// probeRates returns the standard rates d accepts with one channel in each
// direction it has.
func probeRates(d *portaudio.DeviceInfo) []float64 {
	var in, out *portaudio.DeviceInfo
	if d.MaxInputChannels > 0 {
		in = d
	}
	if d.MaxOutputChannels > 0 {
		out = d
	}
	rates := []float64{}
	for _, r := range standardRatesHz {
		good := true
		for _, pair := range [2][2]*portaudio.DeviceInfo{{in, nil}, {nil, out}} {
			if pair[0] == nil && pair[1] == nil {
				continue
			}
			p := portaudio.HighLatencyParameters(pair[0], pair[1])
			if pair[0] != nil {
				p.Input.Channels = 1
			}
			if pair[1] != nil {
				p.Output.Channels = 1
			}
			p.SampleRate = r
			if portaudio.IsFormatSupported(p, func(in, out []float32) {}) != nil {
				good = false
			}
		}
		if good {
			rates = append(rates, r)
		}
	}
	return rates
}

// mapFlags turns PortAudio's callback flags into the engine's status.
func mapFlags(f portaudio.StreamCallbackFlags) status {
	var s status
	if f&portaudio.InputUnderflow != 0 {
		s |= statusInputUnderflow
	}
	if f&portaudio.InputOverflow != 0 {
		s |= statusInputOverflow
	}
	if f&portaudio.OutputUnderflow != 0 {
		s |= statusOutputUnderflow
	}
	if f&portaudio.OutputOverflow != 0 {
		s |= statusOutputOverflow
	}
	if f&portaudio.PrimingOutput != 0 {
		s |= statusPriming
	}
	return s
}

// paStream adapts a PortAudio stream to the Card.
type paStream struct{ s *portaudio.Stream }

func (p *paStream) Start() error { return p.s.Start() }
func (p *paStream) Stop() error  { return p.s.Stop() }
func (p *paStream) Abort() error { return p.s.Abort() }
func (p *paStream) Close() error { return p.s.Close() }

func (p *paStream) Latency() (in, out time.Duration) {
	if i := p.s.Info(); i != nil {
		return i.InputLatency, i.OutputLatency
	}
	return 0, 0
}
