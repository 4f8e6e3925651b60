package tui

import (
	"fmt"
	"strings"
	"testing"

	tea "charm.land/bubbletea/v2"
	"github.com/charmbracelet/x/ansi"
	"github.com/charmbracelet/x/exp/golden"

	"github.com/sweeplock/sweeplock/acquire"
)

// show makes a screen of w×h, hands it a first snapshot with the drive on
// at source time 0 (so the safety caution has come and gone by the
// scene's time) and then the scene.
func show(t testing.TB, b Bench, opt Options, w, h int, scene acquire.Snapshot) *Model {
	t.Helper()
	m := New(b, opt)
	m.Update(tea.WindowSizeMsg{Width: w, Height: h})
	warm := scene
	warm.TimeS = 0
	warm.DriveOn = true
	m.Update(snapMsg(warm))
	m.Update(snapMsg(scene))
	return m
}

func scenes() []struct {
	name string
	snap func() acquire.Snapshot
} {
	return []struct {
		name string
		snap func() acquire.Snapshot
	}{
		{"settling", sceneSettling},
		{"settled", sceneSettled},
		{"third_flagged", sceneThird},
		{"sweep_jump", sceneSweepJump},
		{"error", sceneError},
	}
}

// TestGolden compares the screen, colour stripped, with the files in
// testdata/TestGolden (regenerate with go test ./tui -run TestGolden
// -update after checking the change by eye).
func TestGolden(t *testing.T) {
	for _, sc := range scenes() {
		for _, sz := range [][2]int{{80, 24}, {120, 40}} {
			t.Run(fmt.Sprintf("%s_%dx%d", sc.name, sz[0], sz[1]), func(t *testing.T) {
				m := show(t, &recorder{}, Options{}, sz[0], sz[1], sc.snap())
				golden.RequireEqual(t, ansi.Strip(m.View().Content))
			})
		}
	}
}

// TestFrameSize checks that every scene fills exactly the window, each row
// exactly its width in cells, at the sizes users have and at awkward ones.
func TestFrameSize(t *testing.T) {
	for _, sc := range scenes() {
		for _, sz := range [][2]int{{80, 24}, {100, 30}, {120, 40}, {60, 20}, {72, 18}, {200, 60}, {30, 10}, {10, 4}} {
			for _, help := range []bool{false, true} {
				t.Run(fmt.Sprintf("%s_%dx%d_help=%v", sc.name, sz[0], sz[1], help), func(t *testing.T) {
					m := show(t, &recorder{}, Options{}, sz[0], sz[1], sc.snap())
					m.help = help
					rows := strings.Split(m.View().Content, "\n")
					if len(rows) != sz[1] {
						t.Fatalf("%d rows, want %d", len(rows), sz[1])
					}
					for i, r := range rows {
						if n := ansi.StringWidth(r); n != sz[0] {
							t.Errorf("row %d is %d cells wide, want %d: %q", i, n, sz[0], ansi.Strip(r))
						}
					}
				})
			}
		}
	}
}
