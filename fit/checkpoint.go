package fit

import (
	"bytes"
	"context"
	"encoding/gob"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"os/signal"
	"syscall"
	"time"

	"deflect/internal/atomicfile"
)

// DefaultCheckpointInterval is the time between checkpoints when
// Checkpoint.Interval is zero.
const DefaultCheckpointInterval = time.Minute

// Checkpoint configures the saving of a sampler's state so that a long run
// can be resumed. The zero value writes no checkpoints.
//
// A checkpoint is written every Interval, when the run's context is
// cancelled (status Interrupted) and when the run ends. It holds everything
// the run needs to continue, including the states of its random number
// generators, so a resumed run ends bit for bit as the uninterrupted run
// with the same seed would have. Files are replaced atomically (a temporary
// file renamed into place): a crash while writing leaves the previous
// checkpoint intact.
type Checkpoint struct {
	// Path is the checkpoint file; empty disables checkpoints.
	Path string
	// Interval is the wall-clock time between checkpoints; zero means
	// DefaultCheckpointInterval, a negative value writes only on
	// interruption and at the end.
	Interval time.Duration
	// Resume continues the run saved in Path; it is an error if Path
	// does not exist or was written by a different method, dimension or
	// sampler settings.
	Resume bool
	// Force lets a fresh run replace an existing file at Path; without
	// it a fresh run refuses to overwrite a checkpoint.
	Force bool
}

// SignalContext returns a context cancelled on SIGINT or SIGTERM, for a
// command to pass to a sampler so that Ctrl-C checkpoints and stops the run
// instead of killing it. Call stop to restore the default signal behaviour.
// Library code never installs signal handlers itself.
func SignalContext(parent context.Context) (ctx context.Context, stop context.CancelFunc) {
	return signal.NotifyContext(parent, os.Interrupt, syscall.SIGTERM)
}

// checkpointMagic identifies deflect checkpoint files.
const checkpointMagic = "deflect/fit checkpoint"

// checkpointVersion changes whenever a state's encoding changes.
const checkpointVersion = 1

// checkpointFile is the envelope of every checkpoint.
type checkpointFile struct {
	Magic       string
	Version     int
	Method      string
	Dim         int
	Fingerprint string
	State       []byte
}

// checkpointer decides when to write and writes.
type checkpointer struct {
	cfg         Checkpoint
	method      string
	dim         int
	fingerprint string
	last        time.Time
}

func newCheckpointer(cfg Checkpoint, method string, dim int, fingerprint string) (*checkpointer, error) {
	c := &checkpointer{cfg: cfg, method: method, dim: dim, fingerprint: fingerprint, last: time.Now()}
	if c.cfg.Interval == 0 {
		c.cfg.Interval = DefaultCheckpointInterval
	}
	if cfg.Path == "" {
		if cfg.Resume {
			return nil, errors.New("fit: resume requested without a checkpoint path")
		}
		return c, nil
	}
	if !cfg.Resume && !cfg.Force {
		if _, err := os.Lstat(cfg.Path); err == nil {
			return nil, fmt.Errorf("fit: checkpoint %s: %w", cfg.Path, atomicfile.ErrExists)
		} else if !errors.Is(err, fs.ErrNotExist) {
			return nil, fmt.Errorf("fit: checkpoint: %w", err)
		}
	}
	return c, nil
}

func (c *checkpointer) enabled() bool { return c.cfg.Path != "" }

// due reports whether the interval has passed since the last write.
func (c *checkpointer) due() bool {
	return c.enabled() && c.cfg.Interval > 0 && time.Since(c.last) >= c.cfg.Interval
}

// save writes state (a gob-encodable value) atomically.
func (c *checkpointer) save(state any) error {
	if !c.enabled() {
		return nil
	}
	var buf bytes.Buffer
	if err := gob.NewEncoder(&buf).Encode(state); err != nil {
		return fmt.Errorf("fit: encoding checkpoint: %w", err)
	}
	env := checkpointFile{
		Magic:       checkpointMagic,
		Version:     checkpointVersion,
		Method:      c.method,
		Dim:         c.dim,
		Fingerprint: c.fingerprint,
		State:       buf.Bytes(),
	}
	err := atomicfile.Write(c.cfg.Path, true, func(w io.Writer) error {
		return gob.NewEncoder(w).Encode(&env)
	})
	if err != nil {
		return fmt.Errorf("fit: writing checkpoint: %w", err)
	}
	c.last = time.Now()
	return nil
}

// load reads the checkpoint into state, checking that it belongs to this
// method, dimension and settings.
func (c *checkpointer) load(state any) error {
	f, err := os.Open(c.cfg.Path)
	if err != nil {
		return fmt.Errorf("fit: resume: %w", err)
	}
	defer f.Close()
	var env checkpointFile
	if err := gob.NewDecoder(f).Decode(&env); err != nil || env.Magic != checkpointMagic {
		return fmt.Errorf("fit: resume: %s is not a deflect checkpoint file", c.cfg.Path)
	}
	switch {
	case env.Version != checkpointVersion:
		return fmt.Errorf("fit: resume: %s has checkpoint version %d, this program reads version %d", c.cfg.Path, env.Version, checkpointVersion)
	case env.Method != c.method:
		return fmt.Errorf("fit: resume: %s was written by method %q, not %q", c.cfg.Path, env.Method, c.method)
	case env.Dim != c.dim:
		return fmt.Errorf("fit: resume: %s has %d parameters, the problem has %d", c.cfg.Path, env.Dim, c.dim)
	case env.Fingerprint != c.fingerprint:
		return fmt.Errorf("fit: resume: %s was written with settings %s, the run asks for %s", c.cfg.Path, env.Fingerprint, c.fingerprint)
	}
	if err := gob.NewDecoder(bytes.NewReader(env.State)).Decode(state); err != nil {
		return fmt.Errorf("fit: resume: %s: corrupt state: %w", c.cfg.Path, err)
	}
	c.last = time.Now()
	return nil
}
