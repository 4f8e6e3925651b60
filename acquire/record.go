package acquire

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"
	"time"
)

// Point is one logged measurement of a sweep.
type Point struct {
	Index     int       // 0-based, in logging order
	TimeS     float64   // seconds since the run started (source time)
	Clock     time.Time // wall clock when logged
	Direction Direction // Up, Down or Manual
	FreqSetHz float64   // frequency the drive was set to (the exact coherent value)
	// FreqMeasHz is the drive frequency measured from the response (sine
	// fit); equal to FreqSetHz within noise when the drive shares the
	// source's clock.
	FreqMeasHz float64
	DriveAmp   float64 // drive amplitude, drive units
	// Amp and PhaseDeg hold, per harmonic in the record's order (the
	// fundamental first), the peak amplitude in the display unit and the
	// phase against the drive in degrees.
	Amp      []float64
	PhaseDeg []float64
	THD      float64 // fraction (THD_F of the logged harmonics)
	// NoiseDensity is the response's noise floor in display unit per √Hz.
	NoiseDensity float64
	// Dwell is the wait at the point: from the drive change to the settle
	// detector's decision (or to a forced log).
	Dwell time.Duration
	// MeasureCycles is the number of whole drive cycles the measurement spans.
	MeasureCycles int
	Settled       bool
	SettleState   string  // "settled", "gave-up", "forced" (logged by hand before settling)
	TauS          float64 // transient time constant the settle detector saw, 0 if none
	Flags         Flags
	Note          string
}

// Columns describes the quantities of a record: the harmonics it logs and
// the units of its amplitude columns.
type Columns struct {
	Harmonics []string // labels such as "1", "2", "3", "1/2"; the first is "1"
	Unit      string   // display unit of amplitudes, e.g. "mm"
	DriveUnit string   // e.g. "A"
}

// harmonicTag turns "1/2" into "h1over2" and "3" into "h3" for column names.
func harmonicTag(label string) string {
	return "h" + strings.ReplaceAll(label, "/", "over")
}

// Header returns the CSV header. Column names carry their units.
func (c Columns) Header() []string {
	u := c.Unit
	h := []string{"time_s", "clock_utc", "direction", "point", "freq_set_hz", "freq_meas_hz",
		"drive_amp_" + c.DriveUnit}
	for i, lab := range c.Harmonics {
		t := harmonicTag(lab)
		h = append(h, "amp_"+t+"_"+u, "phase_"+t+"_deg")
		if i > 0 {
			h = append(h, "ratio_"+t+"_pct")
		}
	}
	h = append(h, "thd_pct", "noise_"+u+"_per_rthz", "dwell_s", "measure_cycles", "settled", "settle_state", "tau_s", "flags", "note")
	return h
}

func fmtF(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "NaN"
	}
	return strconv.FormatFloat(v, 'g', 10, 64)
}

// Row formats a point as CSV fields matching Header.
func (c Columns) Row(p Point) []string {
	r := []string{fmtF(p.TimeS), p.Clock.UTC().Format("2006-01-02T15:04:05.000Z"), p.Direction.String(),
		strconv.Itoa(p.Index), fmtF(p.FreqSetHz), fmtF(p.FreqMeasHz), fmtF(p.DriveAmp)}
	for i := range c.Harmonics {
		a, ph := math.NaN(), math.NaN()
		if i < len(p.Amp) {
			a = p.Amp[i]
		}
		if i < len(p.PhaseDeg) {
			ph = p.PhaseDeg[i]
		}
		r = append(r, fmtF(a), fmtF(ph))
		if i > 0 {
			ratio := math.NaN()
			if len(p.Amp) > 0 && p.Amp[0] > 0 {
				ratio = 100 * a / p.Amp[0]
			}
			r = append(r, fmtF(ratio))
		}
	}
	settled := "0"
	if p.Settled {
		settled = "1"
	}
	r = append(r, fmtF(100*p.THD), fmtF(p.NoiseDensity), fmtF(p.Dwell.Seconds()), strconv.Itoa(p.MeasureCycles), settled,
		p.SettleState, fmtF(p.TauS), p.Flags.String(), p.Note)
	return r
}

// Recorder writes logged points to a CSV file, one durable row each.
type Recorder struct {
	path string
	f    *os.File
	w    *bufio.Writer
	cw   *csv.Writer
	cols Columns
	n    int
}

// ErrExists: the record or its sidecar already exists; records are never
// overwritten.
var ErrExists = errors.New("acquire: record file already exists")

// SidecarPath returns the JSON sidecar's path for a CSV path: RUN.csv →
// RUN.json.
func SidecarPath(csvPath string) string {
	if strings.HasSuffix(strings.ToLower(csvPath), ".csv") {
		return csvPath[:len(csvPath)-4] + ".json"
	}
	return csvPath + ".json"
}

// CreateRecord creates a new CSV record and writes its header. It refuses
// to overwrite an existing record or sidecar.
func CreateRecord(path string, cols Columns) (*Recorder, error) {
	if _, err := os.Stat(SidecarPath(path)); err == nil {
		return nil, fmt.Errorf("%w: %s (choose another name with --out)", ErrExists, SidecarPath(path))
	}
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		if errors.Is(err, os.ErrExist) {
			return nil, fmt.Errorf("%w: %s (choose another name with --out)", ErrExists, path)
		}
		return nil, fmt.Errorf("acquire: cannot create the record: %w", err)
	}
	r := &Recorder{path: path, f: f, cols: cols}
	r.w = bufio.NewWriter(f)
	r.cw = csv.NewWriter(r.w)
	if err := r.writeRow(cols.Header()); err != nil {
		f.Close()
		os.Remove(path)
		return nil, err
	}
	return r, nil
}

func (r *Recorder) writeRow(fields []string) error {
	if err := r.cw.Write(fields); err != nil {
		return fmt.Errorf("acquire: writing %s: %w", r.path, err)
	}
	r.cw.Flush()
	if err := r.cw.Error(); err != nil {
		return fmt.Errorf("acquire: writing %s: %w", r.path, err)
	}
	if err := r.w.Flush(); err != nil {
		return fmt.Errorf("acquire: writing %s: %w", r.path, err)
	}
	if err := r.f.Sync(); err != nil {
		return fmt.Errorf("acquire: syncing %s: %w", r.path, err)
	}
	return nil
}

// Write appends a point. When it returns nil the row is on disk (written,
// flushed and synced): the point counts as logged.
func (r *Recorder) Write(p Point) error {
	if r.f == nil {
		return fmt.Errorf("acquire: record %s is closed", r.path)
	}
	if err := r.writeRow(r.cols.Row(p)); err != nil {
		return err
	}
	r.n++
	return nil
}

// Path is the record's file name.
func (r *Recorder) Path() string { return r.path }

// Count is the number of points written.
func (r *Recorder) Count() int { return r.n }

// Close closes the file; safe twice.
func (r *Recorder) Close() error {
	if r.f == nil {
		return nil
	}
	err := r.f.Close()
	r.f = nil
	return err
}

// Record is a sweep record read back from disk.
type Record struct {
	Path      string
	Columns   Columns
	Points    []Point
	Truncated bool // the last line was cut off (a crash mid-write) and was skipped
	Meta      *Sidecar
}

// ErrNotRecord: the file is not a sweeplock sweep record.
var ErrNotRecord = errors.New("acquire: not a sweep record")

// ReadRecord reads a CSV record and, when present, its sidecar. A last
// line cut off mid-write is skipped and reported in Truncated.
func ReadRecord(path string) (*Record, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("acquire: %w", err)
	}
	rec := &Record{Path: path}
	text := string(data)
	if text != "" && !strings.HasSuffix(text, "\n") {
		// The writer ends every row with a newline: anything after the last
		// one is a row cut off by a crash.
		i := strings.LastIndexByte(text, '\n')
		text = text[:i+1]
		rec.Truncated = true
	}
	cr := csv.NewReader(strings.NewReader(text))
	cr.FieldsPerRecord = -1
	rows, err := cr.ReadAll()
	if err != nil {
		return nil, fmt.Errorf("%w: %s: %v", ErrNotRecord, path, err)
	}
	if len(rows) == 0 {
		return nil, fmt.Errorf("%w: %s is empty", ErrNotRecord, path)
	}
	cols, idx, err := parseHeader(rows[0])
	if err != nil {
		return nil, fmt.Errorf("%w: %s: %v", ErrNotRecord, path, err)
	}
	rec.Columns = cols
	for ln, row := range rows[1:] {
		p, err := parseRow(row, cols, idx)
		if err != nil {
			if ln == len(rows)-2 {
				rec.Truncated = true
				break
			}
			return nil, fmt.Errorf("%w: %s line %d: %v", ErrNotRecord, path, ln+2, err)
		}
		rec.Points = append(rec.Points, p)
	}
	if m, err := ReadSidecar(SidecarPath(path)); err == nil {
		rec.Meta = m
	}
	return rec, nil
}

func parseHeader(h []string) (Columns, map[string]int, error) {
	idx := map[string]int{}
	for i, name := range h {
		idx[name] = i
	}
	for _, need := range []string{"time_s", "direction", "point", "freq_set_hz", "settled"} {
		if _, ok := idx[need]; !ok {
			return Columns{}, nil, fmt.Errorf("no %q column", need)
		}
	}
	var c Columns
	for _, name := range h {
		switch {
		case strings.HasPrefix(name, "drive_amp_"):
			c.DriveUnit = strings.TrimPrefix(name, "drive_amp_")
		case strings.HasPrefix(name, "amp_h"):
			rest := strings.TrimPrefix(name, "amp_h")
			us := strings.IndexByte(rest, '_')
			if us < 0 {
				return Columns{}, nil, fmt.Errorf("column %q has no unit", name)
			}
			c.Harmonics = append(c.Harmonics, strings.ReplaceAll(rest[:us], "over", "/"))
			if c.Unit == "" {
				c.Unit = rest[us+1:]
			}
		}
	}
	if len(c.Harmonics) == 0 || c.Harmonics[0] != "1" {
		return Columns{}, nil, errors.New("no fundamental amplitude column amp_h1_<unit>")
	}
	return c, idx, nil
}

func parseRow(row []string, c Columns, idx map[string]int) (Point, error) {
	var p Point
	var firstErr error
	// Columns a reader cannot do without; the others may be missing from a
	// record written by an older version, and read as unknown.
	required := map[string]bool{"time_s": true, "direction": true, "point": true, "freq_set_hz": true, "settled": true}
	get := func(name string) string {
		i, ok := idx[name]
		if !ok || i >= len(row) {
			if firstErr == nil && (required[name] || strings.HasPrefix(name, "amp_h")) {
				firstErr = fmt.Errorf("missing %s", name)
			}
			return ""
		}
		return row[i]
	}
	num := func(name string) float64 {
		s := get(name)
		if s == "" {
			return math.NaN()
		}
		v, err := strconv.ParseFloat(s, 64)
		if err != nil && firstErr == nil {
			firstErr = fmt.Errorf("%s: %q is not a number", name, s)
		}
		return v
	}
	if len(row) != len(idx) {
		return p, fmt.Errorf("%d fields, header has %d", len(row), len(idx))
	}
	p.TimeS = num("time_s")
	if t, err := time.Parse("2006-01-02T15:04:05.000Z", get("clock_utc")); err == nil {
		p.Clock = t
	}
	switch get("direction") {
	case "up":
		p.Direction = Up
	case "down":
		p.Direction = Down
	default:
		p.Direction = Manual
	}
	p.Index = int(num("point"))
	p.FreqSetHz = num("freq_set_hz")
	p.FreqMeasHz = num("freq_meas_hz")
	p.DriveAmp = num("drive_amp_" + c.DriveUnit)
	for _, lab := range c.Harmonics {
		t := harmonicTag(lab)
		p.Amp = append(p.Amp, num("amp_"+t+"_"+c.Unit))
		p.PhaseDeg = append(p.PhaseDeg, num("phase_"+t+"_deg"))
	}
	p.THD = num("thd_pct") / 100
	p.NoiseDensity = num("noise_" + c.Unit + "_per_rthz")
	p.Dwell = time.Duration(num("dwell_s") * float64(time.Second))
	if mc := num("measure_cycles"); mc > 0 {
		p.MeasureCycles = int(mc)
	}
	p.Settled = get("settled") == "1"
	p.SettleState = get("settle_state")
	p.TauS = num("tau_s")
	if strings.Contains(get("flags"), "gap") {
		p.Flags |= FlagGap
	}
	if strings.Contains(get("flags"), "overload") {
		p.Flags |= FlagOverload
	}
	p.Note = get("note")
	return p, firstErr
}
