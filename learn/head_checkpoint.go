package learn

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"math"
)

// HeadCheckpoint is the complete state of an unfinished head fit after some
// epoch: parameters, optimiser moments, step count, early-stopping state and
// the loss history. Minibatch order is derived from (Seed, epoch), so no
// random-generator state is needed. Resuming (HeadFitOptions.Resume) with the same
// config and data gives a head bit-identical to an uninterrupted fit.
//
// MarshalBinary/UnmarshalBinary use striate's own little-endian format
// (magic, version, fields, SHA-256 trailer); UnmarshalBinary checks every
// length against the bytes present before allocating.
type HeadCheckpoint struct {
	fp     [32]byte
	st     headState
	params [][]float32
}

// Epoch returns the number of epochs the checkpoint has completed.
func (c *HeadCheckpoint) Epoch() int { return c.st.epoch }

func headDeepCopy(s [][]float32) [][]float32 {
	if s == nil {
		return nil
	}
	out := make([][]float32, len(s))
	for i, v := range s {
		out[i] = append([]float32(nil), v...)
	}
	return out
}

func (st *headState) snapshot(params [][]float32, fp [32]byte) *HeadCheckpoint {
	c := &HeadCheckpoint{fp: fp, st: *st, params: headDeepCopy(params)}
	c.st.opt1, c.st.opt2, c.st.best = headDeepCopy(st.opt1), headDeepCopy(st.opt2), headDeepCopy(st.best)
	c.st.trainLoss = append([]float64(nil), st.trainLoss...)
	c.st.valLoss = append([]float64(nil), st.valLoss...)
	c.st.valAcc = append([]float64(nil), st.valAcc...)
	return c
}

// restore copies the checkpoint into a fresh fit's state and parameters.
func (c *HeadCheckpoint) restore(st *headState, params [][]float32, fp [32]byte) error {
	if c.fp != fp {
		return ErrHeadCheckpointMismatch
	}
	same := func(a, b [][]float32) bool {
		if len(a) != len(b) {
			return false
		}
		for i := range a {
			if len(a[i]) != len(b[i]) {
				return false
			}
		}
		return true
	}
	if !same(c.params, params) || !same(c.st.opt1, st.opt1) || !same(c.st.opt2, st.opt2) ||
		(c.st.best != nil && !same(c.st.best, params)) {
		return fmt.Errorf("%w (tensor shapes differ)", ErrHeadCheckpointMismatch)
	}
	for i := range params {
		copy(params[i], c.params[i])
		copy(st.opt1[i], c.st.opt1[i])
	}
	for i := range st.opt2 {
		copy(st.opt2[i], c.st.opt2[i])
	}
	o1, o2 := st.opt1, st.opt2
	*st = c.st
	st.opt1, st.opt2 = o1, o2
	st.best = headDeepCopy(c.st.best)
	st.trainLoss = append([]float64(nil), c.st.trainLoss...)
	st.valLoss = append([]float64(nil), c.st.valLoss...)
	st.valAcc = append([]float64(nil), c.st.valAcc...)
	return nil
}

const (
	headCkptMagic   = "STRIATE-HEADCKPT"
	headCkptVersion = 1
	// headCkptMaxLen bounds any one stored array (2^30 values = 4 GiB of float32),
	// far above any head striate trains, so a corrupt length fails early.
	headCkptMaxLen = 1 << 30
)

// MarshalBinary encodes the checkpoint.
func (c *HeadCheckpoint) MarshalBinary() ([]byte, error) {
	var b bytes.Buffer
	w := func(v any) { binary.Write(&b, binary.LittleEndian, v) }
	b.WriteString(headCkptMagic)
	w(uint32(headCkptVersion))
	b.Write(c.fp[:])
	stopped := uint8(0)
	if c.st.stopped {
		stopped = 1
	}
	w(uint64(c.st.epoch))
	w(uint64(c.st.t))
	w(math.Float64bits(c.st.bestLoss))
	w(uint64(c.st.bestEpoch))
	w(uint64(c.st.bad))
	w(stopped)
	for _, s := range [][]float64{c.st.trainLoss, c.st.valLoss, c.st.valAcc} {
		w(uint64(len(s)))
		w(s)
	}
	for _, g := range [][][]float32{c.params, c.st.opt1, c.st.opt2, c.st.best} {
		w(uint64(len(g)))
		for _, t := range g {
			w(uint64(len(t)))
			w(t)
		}
	}
	sum := sha256.Sum256(b.Bytes())
	b.Write(sum[:])
	return b.Bytes(), nil
}

// HeadCheckpointError reports a checkpoint encoding that cannot be decoded.
type HeadCheckpointError struct {
	Offset int
	Msg    string
}

func (e *HeadCheckpointError) Error() string {
	return fmt.Sprintf("learn: checkpoint: at byte %d: %s", e.Offset, e.Msg)
}

// UnmarshalBinary decodes a checkpoint written by MarshalBinary.
func (c *HeadCheckpoint) UnmarshalBinary(data []byte) error {
	if len(data) < len(headCkptMagic)+4+32+sha256.Size {
		return &HeadCheckpointError{0, fmt.Sprintf("%d bytes is too short for a checkpoint", len(data))}
	}
	if string(data[:len(headCkptMagic)]) != headCkptMagic {
		return &HeadCheckpointError{0, "not a striate head checkpoint (bad magic)"}
	}
	body, sum := data[:len(data)-sha256.Size], data[len(data)-sha256.Size:]
	if got := sha256.Sum256(body); !bytes.Equal(got[:], sum) {
		return &HeadCheckpointError{len(body), "SHA-256 mismatch: the checkpoint is corrupt or truncated"}
	}
	off := len(headCkptMagic)
	var err error
	u64 := func() uint64 {
		if err != nil {
			return 0
		}
		if off+8 > len(body) {
			err = &HeadCheckpointError{off, "unexpected end of data"}
			return 0
		}
		v := binary.LittleEndian.Uint64(body[off:])
		off += 8
		return v
	}
	length := func(size int) int {
		v := u64()
		if err == nil && (v > headCkptMaxLen || v*uint64(size) > uint64(len(body)-off)) {
			err = &HeadCheckpointError{off - 8, fmt.Sprintf("length %d exceeds the %d bytes left", v, len(body)-off)}
		}
		if err != nil {
			return 0
		}
		return int(v)
	}
	if v := binary.LittleEndian.Uint32(body[off:]); v != headCkptVersion {
		return &HeadCheckpointError{off, fmt.Sprintf("version %d, this build reads version %d", v, headCkptVersion)}
	}
	off += 4
	var n HeadCheckpoint
	copy(n.fp[:], body[off:off+32])
	off += 32
	n.st.epoch = int(u64())
	n.st.t = int(u64())
	n.st.bestLoss = math.Float64frombits(u64())
	n.st.bestEpoch = int(u64())
	n.st.bad = int(u64())
	if err == nil {
		if off >= len(body) {
			return &HeadCheckpointError{off, "unexpected end of data"}
		}
		n.st.stopped = body[off] == 1
		off++
	}
	series := make([][]float64, 3)
	for i := range series {
		l := length(8)
		if err != nil {
			return err
		}
		s := make([]float64, l)
		for j := range s {
			s[j] = math.Float64frombits(binary.LittleEndian.Uint64(body[off:]))
			off += 8
		}
		series[i] = s
	}
	n.st.trainLoss, n.st.valLoss, n.st.valAcc = series[0], series[1], series[2]
	groups := make([][][]float32, 4)
	for gi := range groups {
		cnt := length(8)
		if err != nil {
			return err
		}
		if cnt == 0 {
			continue
		}
		g := make([][]float32, cnt)
		for i := range g {
			l := length(4)
			if err != nil {
				return err
			}
			t := make([]float32, l)
			for j := range t {
				t[j] = math.Float32frombits(binary.LittleEndian.Uint32(body[off:]))
				off += 4
			}
			g[i] = t
		}
		groups[gi] = g
	}
	if off != len(body) {
		return &HeadCheckpointError{off, fmt.Sprintf("%d trailing bytes", len(body)-off)}
	}
	n.params, n.st.opt1, n.st.opt2, n.st.best = groups[0], groups[1], groups[2], groups[3]
	if len(n.params) == 0 {
		return &HeadCheckpointError{off, "no parameters"}
	}
	*c = n
	return nil
}
