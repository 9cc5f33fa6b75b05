package fit

import (
	"context"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

func TestCheckpointErrors(t *testing.T) {
	rnd := rand.New(rand.NewPCG(4, 1))
	g := newGaussian(2, rnd, false)
	p := g.problem(g.box(6, 0))
	dir := t.TempDir()

	// A finished run leaves a checkpoint; resuming it returns the same
	// result without further work.
	path := filepath.Join(dir, "done.ckpt")
	first, err := Nested(context.Background(), p, NestedSettings{Seed: 1, Checkpoint: Checkpoint{Path: path, Interval: -1}})
	if err != nil {
		t.Fatal(err)
	}
	again, err := Nested(context.Background(), p, NestedSettings{Seed: 1, Checkpoint: Checkpoint{Path: path, Resume: true}})
	if err != nil {
		t.Fatal(err)
	}
	if again.LogZ != first.LogZ || again.Evaluations != first.Evaluations {
		t.Errorf("resumed finished run: ln Z %v (%d evaluations), first %v (%d)", again.LogZ, again.Evaluations, first.LogZ, first.Evaluations)
	}

	for _, tc := range []struct {
		name string
		run  func() error
		want string
	}{
		{"missing file", func() error {
			_, err := Nested(context.Background(), p, NestedSettings{Checkpoint: Checkpoint{Path: filepath.Join(dir, "none"), Resume: true}})
			return err
		}, "no such file"},
		{"other method", func() error {
			_, err := Ensemble(context.Background(), p, EnsembleSettings{Seed: 1, Checkpoint: Checkpoint{Path: path, Resume: true}})
			return err
		}, `written by method "nested"`},
		{"other dimension", func() error {
			g3 := newGaussian(3, rnd, false)
			_, err := Nested(context.Background(), g3.problem(g3.box(6, 0)), NestedSettings{Seed: 1, Checkpoint: Checkpoint{Path: path, Resume: true}})
			return err
		}, "has 2 parameters, the problem has 3"},
		{"other settings", func() error {
			_, err := Nested(context.Background(), p, NestedSettings{Seed: 1, Live: 200, Checkpoint: Checkpoint{Path: path, Resume: true}})
			return err
		}, "live=200"},
		{"not a checkpoint", func() error {
			bad := filepath.Join(dir, "bad.ckpt")
			os.WriteFile(bad, []byte("x,y\n1,2\n"), 0o644)
			_, err := Nested(context.Background(), p, NestedSettings{Checkpoint: Checkpoint{Path: bad, Resume: true}})
			return err
		}, "is not a deflect checkpoint"},
		{"resume without path", func() error {
			_, err := Nested(context.Background(), p, NestedSettings{Checkpoint: Checkpoint{Resume: true}})
			return err
		}, "without a checkpoint path"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			err := tc.run()
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("err = %v, want one containing %q", err, tc.want)
			}
		})
	}
	// Force lets a fresh run replace the checkpoint.
	if _, err := Nested(context.Background(), p, NestedSettings{Seed: 2, Checkpoint: Checkpoint{Path: path, Force: true}}); err != nil {
		t.Errorf("forced fresh run: %v", err)
	}
	// No temporary files are left behind.
	ents, _ := os.ReadDir(dir)
	for _, e := range ents {
		if strings.Contains(e.Name(), ".tmp") {
			t.Errorf("temporary file %s left", e.Name())
		}
	}
}

func TestSignalContext(t *testing.T) {
	// SIGTERM to ourselves while SignalContext is active cancels the
	// context instead of killing the process.
	ctx, stop := SignalContext(context.Background())
	defer stop()
	if err := syscall.Kill(os.Getpid(), syscall.SIGTERM); err != nil {
		t.Skip("cannot signal self:", err)
	}
	select {
	case <-ctx.Done():
	case <-time.After(5 * time.Second):
		t.Fatal("context not cancelled by SIGTERM")
	}
}
