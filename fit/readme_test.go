package fit

import (
	"os"
	"strings"
	"testing"
)

// The README documents every kind and parameter by quoting KindsHelp; this
// keeps the two from drifting apart.
func TestReadmeQuotesKindsHelp(t *testing.T) {
	b, err := os.ReadFile("../README.md")
	if err != nil {
		t.Skip("README.md not found beside the module:", err)
	}
	if !strings.Contains(string(b), KindsHelp()) {
		t.Error("README.md does not contain the current KindsHelp() table; paste the output of \"deflect fit -h kinds\" into its kinds block")
	}
}
