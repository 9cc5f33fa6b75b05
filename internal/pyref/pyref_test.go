package pyref

import (
	"os/exec"
	"testing"
)

func TestPythonFindsAnInterpreterThatImports(t *testing.T) {
	t.Setenv(RequireEnv, "")
	py := Python(t, "math")
	if err := exec.Command(py, "-c", "import math").Run(); err != nil {
		t.Fatalf("%s cannot import math: %v", py, err)
	}
}
