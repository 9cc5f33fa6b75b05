package plots

import (
	"fmt"
	"os"
	"path/filepath"
	"testing"
)

// TestWriteFigures writes every figure case, at 48 and 256 pixels a side,
// as PNG into the directory named by DEFLECT_PLOTS_OUT, for looking at
// them. It is skipped when the variable is unset.
func TestWriteFigures(t *testing.T) {
	dir := os.Getenv("DEFLECT_PLOTS_OUT")
	if dir == "" {
		t.Skip("set DEFLECT_PLOTS_OUT=dir to write every figure there")
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, c := range figureCases {
		for _, n := range []int{48, 256} {
			f, err := c.build(n)
			if err != nil {
				t.Fatalf("%s/%d: %v", c.name, n, err)
			}
			path := filepath.Join(dir, fmt.Sprintf("%s-%d.png", c.name, n))
			if err := Save(f, 0, 0, path, "", true); err != nil {
				t.Fatal(err)
			}
		}
	}
}
