//go:build tools

// This file pins modules that later parts of the program import, so that
// go.mod stays stable while they are written. It is never built.
package main

import (
	_ "charm.land/bubbles/v2/key"
	_ "charm.land/bubbletea/v2"
	_ "charm.land/lipgloss/v2"
	_ "github.com/BurntSushi/toml"
	_ "github.com/alecthomas/kong"
	_ "github.com/charmbracelet/x/ansi"
	_ "github.com/charmbracelet/x/exp/golden"
	_ "github.com/creack/pty"
	_ "github.com/gordonklaus/portaudio"
	_ "go.bug.st/serial"
	_ "go.bug.st/serial/enumerator"
	_ "gonum.org/v1/gonum/dsp/fourier"
	_ "gonum.org/v1/gonum/dsp/window"
	_ "gonum.org/v1/gonum/mat"
	_ "gonum.org/v1/gonum/mathext"
	_ "gonum.org/v1/gonum/optimize"
	_ "gonum.org/v1/plot"
)
