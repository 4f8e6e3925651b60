package serialadc

import (
	"os"
	"testing"
)

// RawPty lends the package's pseudo-terminal helper to the external tests
// (package serialadc_test), which cannot be inside the package because they
// import acquire/rig, which imports this package.
func RawPty(t *testing.T) (leader, follower *os.File) { return rawPty(t) }
