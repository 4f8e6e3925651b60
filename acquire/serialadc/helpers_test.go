package serialadc

import (
	"os"
	"testing"

	"github.com/creack/pty"
	"golang.org/x/sys/unix"
)

// gotFrame is a copy of one Frame a decoder delivered.
type gotFrame struct {
	vals    []float64
	us      int64
	hasTime bool
	gap     bool
	lost    int64
}

// collector is a FrameSink that keeps copies of every frame.
type collector struct{ frames []gotFrame }

func (c *collector) Frame(f *Frame) {
	c.frames = append(c.frames, gotFrame{
		vals: append([]float64(nil), f.Values...), us: f.TimeUS,
		hasTime: f.HasTime, gap: f.Gap, lost: f.Lost,
	})
}

// makeRaw puts a terminal into raw mode, as cfmakeraw(3) does: no input
// translation (CR/LF), no XON/XOFF flow control, no echo, no signals, no
// output processing, 8-bit characters. Without it a pseudo-terminal turns
// 0x0D into 0x0A and swallows 0x11/0x13 (common practice: termios(3)).
func makeRaw(f *os.File) error {
	fd := int(f.Fd())
	t, err := unix.IoctlGetTermios(fd, unix.TCGETS)
	if err != nil {
		return err
	}
	t.Iflag &^= unix.IGNBRK | unix.BRKINT | unix.PARMRK | unix.ISTRIP | unix.INLCR | unix.IGNCR | unix.ICRNL | unix.IXON | unix.IXOFF | unix.IXANY
	t.Oflag &^= unix.OPOST
	t.Lflag &^= unix.ECHO | unix.ECHONL | unix.ICANON | unix.ISIG | unix.IEXTEN
	t.Cflag &^= unix.CSIZE | unix.PARENB
	t.Cflag |= unix.CS8
	t.Cc[unix.VMIN] = 1
	t.Cc[unix.VTIME] = 0
	return unix.IoctlSetTermios(fd, unix.TCSETS, t)
}

// rawPty opens a pseudo-terminal pair in raw mode. The caller owns both
// ends; they are also closed at the end of the test.
func rawPty(t *testing.T) (leader, follower *os.File) {
	t.Helper()
	leader, follower, err := pty.Open()
	if err != nil {
		t.Skipf("no pseudo-terminals here: %v", err)
	}
	if err := makeRaw(follower); err != nil {
		leader.Close()
		follower.Close()
		t.Fatalf("raw mode: %v", err)
	}
	t.Cleanup(func() {
		leader.Close()
		follower.Close()
	})
	return leader, follower
}
