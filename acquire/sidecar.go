package acquire

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"time"
)

// SidecarFormat names the sidecar's layout; readers check it.
const SidecarFormat = "sweeplock-run/1"

// Sidecar is the JSON file beside a CSV record: how the run was made and,
// once it ends, what it found.
type Sidecar struct {
	Format     string     `json:"format"`
	Software   string     `json:"software"`
	Started    time.Time  `json:"started_utc"`
	Record     string     `json:"record"`
	Rig        RigSummary `json:"rig"`
	RigText    string     `json:"rig_file_text,omitempty"`
	Plan       *PlanJSON  `json:"plan,omitempty"`
	Source     SourceInfo `json:"source"`
	Drive      DriveInfo  `json:"drive"`
	Harmonics  []string   `json:"harmonics"`
	Unit       string     `json:"unit"`
	SensorKind string     `json:"sensor_kind"`
	// Calibration from source volts to the display unit: unit = (V − OffsetV)/VoltsPerUnit.
	VoltsPerUnit float64  `json:"volts_per_unit"`
	OffsetV      float64  `json:"offset_v"`
	Raw          *RawInfo `json:"raw_capture,omitempty"`
	Summary      *Summary `json:"summary,omitempty"`
}

// RigSummary names the rig and, for the simulated rig, its true parameters.
type RigSummary struct {
	Name   string         `json:"name"`
	File   string         `json:"file,omitempty"`
	Params map[string]any `json:"sim_params,omitempty"`
}

// PlanJSON is a Plan in the sidecar's units.
type PlanJSON struct {
	StartHz        float64 `json:"start_hz"`
	StopHz         float64 `json:"stop_hz"`
	StepHz         float64 `json:"step_hz"`
	Points         int     `json:"points"`
	Spacing        string  `json:"spacing"`
	Direction      string  `json:"direction"`
	MinDwellCycles int     `json:"min_dwell_cycles"`
	MaxDwellS      float64 `json:"max_dwell_s"`
	MeasureCycles  int     `json:"measure_cycles"`
	SettleTol      float64 `json:"settle_tol"`
	Refine         bool    `json:"refine"`
	DriveAmp       float64 `json:"drive_amp"`
}

// RawInfo ties a raw WAV capture to the logged points.
type RawInfo struct {
	File     string     `json:"file"`
	RateHz   float64    `json:"rate_hz"`
	Channels []string   `json:"channels"`
	Points   []RawPoint `json:"points"`
}

// RawPoint gives the frames of the raw capture a logged point was measured on.
type RawPoint struct {
	Point      int   `json:"point"`
	FirstFrame int64 `json:"first_frame"`
	Frames     int64 `json:"frames"`
}

// Summary is written when a run ends.
type Summary struct {
	Finished   time.Time  `json:"finished_utc"`
	Points     int        `json:"points"`
	NotSettled int        `json:"not_settled"`
	Jumps      []JumpJSON `json:"jumps"`
	BandLoHz   float64    `json:"band_lo_hz,omitempty"`
	BandHiHz   float64    `json:"band_hi_hz,omitempty"`
	Completed  bool       `json:"completed"`
	StopReason string     `json:"stop_reason,omitempty"`
	Gaps       uint64     `json:"gaps"`
	Overloads  uint64     `json:"overloads"`
	Dropped    uint64     `json:"dropped_blocks"`
}

// JumpJSON is one jump found in a sweep direction.
type JumpJSON struct {
	Direction string  `json:"direction"`
	FromHz    float64 `json:"from_hz"`
	ToHz      float64 `json:"to_hz"`
	AmpBefore float64 `json:"amp_before"`
	AmpAfter  float64 `json:"amp_after"`
	Rise      bool    `json:"rise"`
	// Refined is the number of refinement rounds that narrowed the interval.
	Refined int `json:"refined_rounds,omitempty"`
}

// WriteSidecar writes the sidecar atomically (a temporary file, synced,
// then renamed), so a reader finds either the old version, the new one, or
// none: never half a file.
func WriteSidecar(path string, s *Sidecar) error {
	data, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return fmt.Errorf("acquire: sidecar: %w", err)
	}
	data = append(data, '\n')
	tmp, err := os.CreateTemp(filepath.Dir(path), ".sidecar-*.tmp")
	if err != nil {
		return fmt.Errorf("acquire: sidecar: %w", err)
	}
	name := tmp.Name()
	if _, err := tmp.Write(data); err != nil {
		tmp.Close()
		os.Remove(name)
		return fmt.Errorf("acquire: sidecar: %w", err)
	}
	if err := tmp.Sync(); err != nil {
		tmp.Close()
		os.Remove(name)
		return fmt.Errorf("acquire: sidecar: %w", err)
	}
	if err := tmp.Close(); err != nil {
		os.Remove(name)
		return fmt.Errorf("acquire: sidecar: %w", err)
	}
	if err := os.Rename(name, path); err != nil {
		os.Remove(name)
		return fmt.Errorf("acquire: sidecar: %w", err)
	}
	return nil
}

// ReadSidecar reads and checks a sidecar.
func ReadSidecar(path string) (*Sidecar, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("acquire: %w", err)
	}
	var s Sidecar
	if err := json.Unmarshal(data, &s); err != nil {
		return nil, fmt.Errorf("acquire: sidecar %s: %w", path, err)
	}
	if s.Format != SidecarFormat {
		return nil, fmt.Errorf("acquire: sidecar %s: format %q, want %q", path, s.Format, SidecarFormat)
	}
	return &s, nil
}
