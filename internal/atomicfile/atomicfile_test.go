package atomicfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"testing"
)

func TestWriteRefusesToOverwrite(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "out.txt")
	if err := WriteBytes(p, false, []byte("first")); err != nil {
		t.Fatal(err)
	}
	if err := WriteBytes(p, false, []byte("second")); !errors.Is(err, ErrExists) {
		t.Fatalf("overwrite without force: got %v, want ErrExists", err)
	}
	if b, _ := os.ReadFile(p); string(b) != "first" {
		t.Fatalf("file changed to %q", b)
	}
	if err := WriteBytes(p, true, []byte("second")); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(p); string(b) != "second" {
		t.Fatalf("forced write left %q", b)
	}
}

func TestWriteFailureLeavesNoFile(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "out.txt")
	boom := errors.New("boom")
	err := Write(p, false, func(w io.Writer) error {
		io.WriteString(w, "partial")
		return boom
	})
	if !errors.Is(err, boom) {
		t.Fatalf("got %v, want the fill error", err)
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 0 {
		t.Fatalf("failed write left %d files", len(entries))
	}
}

func TestPrepareDir(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "res")
	if err := PrepareDir(dir, false); err != nil {
		t.Fatal(err)
	}
	if err := PrepareDir(dir, false); err != nil {
		t.Fatalf("empty dir refused: %v", err)
	}
	os.WriteFile(filepath.Join(dir, "x"), nil, 0o644)
	if err := PrepareDir(dir, false); !errors.Is(err, ErrExists) {
		t.Fatalf("non-empty dir: got %v, want ErrExists", err)
	}
	if err := PrepareDir(dir, true); err != nil {
		t.Fatal(err)
	}
}
