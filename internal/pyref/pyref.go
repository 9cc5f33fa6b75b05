// Package pyref finds the Python interpreter that tests use as an outside
// reference (python3-astropy, python3-numpy from Debian).
//
// Debian installs those packages for the system interpreter,
// /usr/bin/python3, which need not be the python3 first on PATH, so every
// candidate is tried.
package pyref

import (
	"os"
	"os/exec"
	"strings"
	"testing"
)

// RequireEnv is the environment variable that turns a missing reference
// interpreter from a skipped test into a failed one (CI sets it to 1).
const RequireEnv = "DEFLECT_REQUIRE_ASTROPY"

// Python returns the first of /usr/bin/python3 and the python3 on PATH that
// imports every module in modules (e.g. "astropy.wcs"). When none does, it
// skips t with a message, or fails it when RequireEnv is "1".
func Python(t testing.TB, modules ...string) string {
	t.Helper()
	cands := []string{"/usr/bin/python3"}
	if p, err := exec.LookPath("python3"); err == nil && p != cands[0] {
		cands = append(cands, p)
	}
	imp := "import " + strings.Join(modules, ", ")
	for _, p := range cands {
		if exec.Command(p, "-c", imp).Run() == nil {
			return p
		}
	}
	msg := "no python3 that can " + imp + "; install python3-astropy (apt-get install -y python3-astropy)"
	if os.Getenv(RequireEnv) == "1" {
		t.Fatal(msg + " (" + RequireEnv + "=1)")
	}
	t.Skip(msg)
	return ""
}
