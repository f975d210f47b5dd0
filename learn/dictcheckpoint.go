package learn

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"math"
	"math/rand/v2"
)

// DictCheckpoint is a snapshot of a dictionary fit after Step minibatch steps:
// everything Resume needs to finish the fit exactly as an uninterrupted run
// would (atoms, the A and B statistics, the random-number state and the
// current epoch's order). It is a value the caller owns.
type DictCheckpoint struct {
	Step      int
	Atoms     int
	Dim       int
	N         int     // signals in the training data
	Lambda    float64 // and the other settings that shape the path,
	BatchSize int     // checked on Resume
	Seed      uint64
	D, A, Bt  []float32
	RNG       []byte // math/rand/v2 PCG state
	Perm      []int32
	Pos       int
	RunObj    float64
}

// Dictionary returns the atoms at the checkpoint.
func (c *DictCheckpoint) Dictionary() (*Dictionary, error) { return NewDictionary(c.D, c.Atoms, c.Dim) }

func (l *learner) snapshot() *DictCheckpoint {
	st, _ := l.pcg.MarshalBinary()
	return &DictCheckpoint{Step: l.step, Atoms: l.cfg.Atoms, Dim: l.dim, N: l.n, Lambda: l.cfg.Lambda,
		BatchSize: l.cfg.BatchSize, Seed: l.cfg.Seed,
		D: append([]float32(nil), l.d...), A: append([]float32(nil), l.a...), Bt: append([]float32(nil), l.bt...),
		RNG: st, Perm: append([]int32(nil), l.perm...), Pos: l.pos, RunObj: l.runObj}
}

func (l *learner) restore(c *DictCheckpoint) error {
	k, dim := l.cfg.Atoms, l.dim
	switch {
	case c.Atoms != k || c.Dim != dim || c.N != l.n:
		return fmt.Errorf("learn: checkpoint is for %d atoms × %d dims over %d signals; this fit has %d × %d over %d", c.Atoms, c.Dim, c.N, k, dim, l.n)
	case c.Lambda != l.cfg.Lambda || c.BatchSize != l.cfg.BatchSize || c.Seed != l.cfg.Seed:
		return fmt.Errorf("learn: checkpoint has λ %v, batch %d, seed %d; this fit has λ %v, batch %d, seed %d",
			c.Lambda, c.BatchSize, c.Seed, l.cfg.Lambda, l.cfg.BatchSize, l.cfg.Seed)
	case len(c.D) != k*dim || len(c.A) != k*k || len(c.Bt) != k*dim || len(c.Perm) != l.n || c.Pos < 0 || c.Pos > l.n || c.Step < 0:
		return fmt.Errorf("learn: checkpoint arrays have inconsistent sizes")
	}
	l.pcg = &rand.PCG{}
	if err := l.pcg.UnmarshalBinary(c.RNG); err != nil {
		return fmt.Errorf("learn: checkpoint random state: %w", err)
	}
	l.rng = rand.New(l.pcg)
	l.step, l.pos, l.runObj = c.Step, c.Pos, c.RunObj
	l.d = append([]float32(nil), c.D...)
	l.a = append([]float32(nil), c.A...)
	l.bt = append([]float32(nil), c.Bt...)
	l.perm = append([]int32(nil), c.Perm...)
	return nil
}

// DictCheckpoint file layout (little-endian): magic "STRIDCK1", then uint64
// Step, Atoms, Dim, N, BatchSize, Seed, Pos, float64 Lambda, RunObj, uint64
// len(RNG) and the RNG bytes, then D, A, Bt as float32 and Perm as int32
// (lengths implied by the header), then a CRC-32 (IEEE) of everything before.
const ckMagic = "STRIDCK1"

// ErrDictCheckpoint is wrapped by every error about a malformed checkpoint file.
var ErrDictCheckpoint = errors.New("learn: bad checkpoint file")

// maxCheckpointN bounds N in a checkpoint file (2^28 signals): the order
// array alone would then need 1 GiB.
const maxCheckpointN = 1 << 28

// Save writes the checkpoint to w.
func (c *DictCheckpoint) Save(w io.Writer) error {
	h := crc32.NewIEEE()
	bw := bufio.NewWriter(io.MultiWriter(w, h))
	bw.WriteString(ckMagic)
	var b8 [8]byte
	u := func(v uint64) { binary.LittleEndian.PutUint64(b8[:], v); bw.Write(b8[:]) }
	for _, v := range []int{c.Step, c.Atoms, c.Dim, c.N, c.BatchSize} {
		u(uint64(v))
	}
	u(c.Seed)
	u(uint64(c.Pos))
	u(math.Float64bits(c.Lambda))
	u(math.Float64bits(c.RunObj))
	u(uint64(len(c.RNG)))
	bw.Write(c.RNG)
	var b4 [4]byte
	for _, s := range [][]float32{c.D, c.A, c.Bt} {
		for _, v := range s {
			binary.LittleEndian.PutUint32(b4[:], math.Float32bits(v))
			bw.Write(b4[:])
		}
	}
	for _, v := range c.Perm {
		binary.LittleEndian.PutUint32(b4[:], uint32(v))
		bw.Write(b4[:])
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("learn: write checkpoint: %w", err)
	}
	binary.LittleEndian.PutUint32(b4[:], h.Sum32())
	if _, err := w.Write(b4[:]); err != nil {
		return fmt.Errorf("learn: write checkpoint: %w", err)
	}
	return nil
}

// LoadDictCheckpoint reads a checkpoint written by Save. Sizes are checked
// against MaxAtoms and maxCheckpointN before anything is allocated; a
// malformed file gives an error wrapping ErrDictCheckpoint.
func LoadDictCheckpoint(r io.Reader) (*DictCheckpoint, error) {
	h := crc32.NewIEEE()
	br := io.TeeReader(bufio.NewReader(r), h)
	bad := func(format string, a ...any) error {
		return fmt.Errorf("%w: %s", ErrDictCheckpoint, fmt.Sprintf(format, a...))
	}
	var magic [8]byte
	if _, err := io.ReadFull(br, magic[:]); err != nil || string(magic[:]) != ckMagic {
		return nil, bad("missing magic %q at offset 0", ckMagic)
	}
	var hdr [10]uint64
	if err := binary.Read(br, binary.LittleEndian, hdr[:]); err != nil {
		return nil, bad("header truncated: %v", err)
	}
	if hdr[1] < 1 || hdr[1] > MaxAtoms || hdr[2] < 1 || hdr[2] > 1<<16 || hdr[3] > maxCheckpointN ||
		hdr[6] > hdr[3] || hdr[0] > 1<<40 || hdr[4] > 1<<30 || hdr[9] > 64 {
		return nil, bad("header out of range (atoms %d in [1,%d], dim %d in [1,65536], n %d ≤ %d, pos %d ≤ n, rng state %d ≤ 64 bytes)",
			hdr[1], MaxAtoms, hdr[2], hdr[3], maxCheckpointN, hdr[6], hdr[9])
	}
	c := &DictCheckpoint{Step: int(hdr[0]), Atoms: int(hdr[1]), Dim: int(hdr[2]), N: int(hdr[3]), BatchSize: int(hdr[4]),
		Seed: hdr[5], Pos: int(hdr[6]), Lambda: math.Float64frombits(hdr[7]), RunObj: math.Float64frombits(hdr[8])}
	c.RNG = make([]byte, hdr[9])
	if _, err := io.ReadFull(br, c.RNG); err != nil {
		return nil, bad("random state truncated: %v", err)
	}
	k, dim := c.Atoms, c.Dim
	readF := func(name string, n int) ([]float32, error) {
		out, err := readGrowing[float32](br, n)
		if err != nil {
			return nil, bad("%s truncated (want %d float32 values): %v", name, n, err)
		}
		return out, nil
	}
	var err error
	if c.D, err = readF("atoms", k*dim); err != nil {
		return nil, err
	}
	if c.A, err = readF("statistic A", k*k); err != nil {
		return nil, err
	}
	if c.Bt, err = readF("statistic B", k*dim); err != nil {
		return nil, err
	}
	if c.Perm, err = readGrowing[int32](br, c.N); err != nil {
		return nil, bad("order truncated (want %d int32 values): %v", c.N, err)
	}
	sum := h.Sum32()
	var b4 [4]byte
	if _, err := io.ReadFull(br, b4[:]); err != nil {
		return nil, bad("checksum missing: %v", err)
	}
	if got := binary.LittleEndian.Uint32(b4[:]); got != sum {
		return nil, bad("checksum %08x; contents hash to %08x (file damaged)", got, sum)
	}
	for i, v := range c.Perm {
		if v < 0 || int(v) >= c.N {
			return nil, bad("order entry %d is %d; want [0,%d)", i, v, c.N)
		}
	}
	return c, nil
}

// readGrowing reads n little-endian values from r in chunks of at most
// 256 Ki values, so that memory grows with the bytes actually present and a
// header claiming more than the file holds costs little (before, the whole
// claimed size was allocated first: 1 GiB for a 90-byte file).
func readGrowing[T float32 | int32](r io.Reader, n int) ([]T, error) {
	const chunk = 1 << 18
	out := make([]T, 0, min(n, chunk))
	for len(out) < n {
		k := min(n-len(out), chunk)
		part := make([]T, k)
		if err := binary.Read(r, binary.LittleEndian, part); err != nil {
			return nil, err
		}
		out = append(out, part...)
	}
	return out, nil
}
