// Package benchwork holds the reference work that striate's benchmarks and
// the `striate bench` command time, embedded in the binary so that nothing
// outside the repository is needed: the front-end specification
// (filterbank.json) and its 18 float64 kernels (filterbank_kernels.json),
// 64 photo crops of 256×256 stored as one 2048×2048 grey PNG, and the
// figures that general-purpose libraries reached on the same work
// (peers.json; each figure names its library and version). The MNIST test
// images come from datasets.LoadMNIST. data/README.md says where every file
// came from.
//
// Every loader takes a folder: "" means the embedded copy; a folder laid
// out like the shared reference work (filterbank.json, filterbank_kernels.json,
// README.md, data/crops256_8x8.png) overrides it.
package benchwork

import (
	"bufio"
	"bytes"
	"embed"
	"encoding/json"
	"fmt"
	"image"
	"image/png"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/striate/striate/datasets"
)

//go:embed data/filterbank.json data/filterbank_kernels.json data/crops256_8x8.png data/crops256.json data/peers.json
var embedded embed.FS

// Embedded names the embedded reference work in sources and messages.
const Embedded = "embedded reference work"

// DefaultRel is empty: with no folder given, the loaders read the embedded
// reference work.
//
// Deprecated: pass "" to the loaders instead.
const DefaultRel = ""

// FindDir returns dir unchanged: "" selects the embedded reference work,
// and a non-empty dir must hold filterbank.json (the error says what a
// reference folder holds otherwise).
func FindDir(dir string) (string, error) {
	if dir == "" {
		return "", nil
	}
	if _, err := os.Stat(filepath.Join(dir, "filterbank.json")); err != nil {
		return "", fmt.Errorf("benchwork: %s is not a reference folder (no filterbank.json: %v); pass a folder that holds filterbank.json, filterbank_kernels.json, README.md and data/crops256_8x8.png, or none to use the %s", dir, err, Embedded)
	}
	return dir, nil
}

// ReadFile returns a file of the reference work by its name relative to the
// reference folder (e.g. "filterbank.json", "data/crops256_8x8.png"): from
// dir, or from the embedded copy when dir is "" (where the crops PNG is
// named "crops256_8x8.png" too). It also returns where the bytes came from.
func ReadFile(dir, name string) ([]byte, string, error) {
	if dir != "" {
		path := filepath.Join(dir, filepath.FromSlash(name))
		b, err := os.ReadFile(path)
		if err != nil {
			return nil, "", fmt.Errorf("benchwork: %v", err)
		}
		return b, path, nil
	}
	base := "data/" + strings.TrimPrefix(name, "data/")
	b, err := fs.ReadFile(embedded, base)
	if err != nil {
		return nil, "", fmt.Errorf("benchwork: the %s has no %s (it holds filterbank.json, filterbank_kernels.json, crops256_8x8.png, crops256.json, peers.json)", Embedded, name)
	}
	return b, Embedded + " " + strings.TrimPrefix(name, "data/"), nil
}

// Set is one input set of the reference work.
type Set struct {
	Name   string
	H, W   int
	Images [][]float32 // row-major H×W, values in [0,1]
	Source string      // where the images came from
}

// Crops reads the 64 crops of 256×256 from data/crops256_8x8.png (crop i
// at tile row i/8, column i%8), pixel/255. n > 0 keeps the first n.
func Crops(dir string, n int) (*Set, error) {
	b, src, err := ReadFile(dir, "data/crops256_8x8.png")
	if err != nil {
		return nil, err
	}
	img, err := png.Decode(bufio.NewReader(bytes.NewReader(b)))
	if err != nil {
		return nil, fmt.Errorf("benchwork: %s: %v", src, err)
	}
	g, ok := img.(*image.Gray)
	if !ok || g.Rect.Dx() != 2048 || g.Rect.Dy() != 2048 {
		return nil, fmt.Errorf("benchwork: %s: want an 8-bit grey 2048×2048 PNG, got %T %v", src, img, img.Bounds())
	}
	const side, tiles = 256, 64
	if n <= 0 || n > tiles {
		n = tiles
	}
	s := &Set{Name: "crops 256×256", H: side, W: side, Source: src}
	for i := 0; i < n; i++ {
		y0, x0 := (i/8)*side, (i%8)*side
		px := make([]float32, side*side)
		for y := 0; y < side; y++ {
			row := g.Pix[(y0+y)*g.Stride+x0:]
			for x := 0; x < side; x++ {
				px[y*side+x] = float32(row[x]) / 255
			}
		}
		s.Images = append(s.Images, px)
	}
	return s, nil
}

// MNIST returns the MNIST test images (datasets.LoadMNIST, pixel/255); n > 0
// keeps the first n. If MNIST cannot be loaded it returns seeded random
// 28×28 images instead (throughput does not depend on content) with the
// reason in Source, and a nil error.
func MNIST(n int) *Set {
	s := &Set{Name: "MNIST 28×28", H: 28, W: 28}
	set, err := datasets.LoadMNIST(datasets.Test, "")
	if err == nil {
		if n <= 0 || n > set.N {
			n = set.N
		}
		for i := 0; i < n; i++ {
			s.Images = append(s.Images, set.Float(nil, i))
		}
		s.Source = "MNIST test set (" + set.Source + ")"
		return s
	}
	if n <= 0 {
		n = 10000
	}
	rng := rand.New(rand.NewPCG(1, 28))
	for i := 0; i < n; i++ {
		px := make([]float32, 28*28)
		for j := range px {
			px[j] = float32(rng.IntN(256)) / 255
		}
		s.Images = append(s.Images, px)
	}
	s.Source = fmt.Sprintf("random 28×28 stand-ins (MNIST unavailable: %v)", err)
	return s
}

// Kernel is one reference kernel (float64, row-major Size×Size).
type Kernel struct {
	Name string
	Size int
	W    []float64
}

// Kernels reads filterbank_kernels.json.
func Kernels(dir string) ([]Kernel, error) {
	b, path, err := ReadFile(dir, "filterbank_kernels.json")
	if err != nil {
		return nil, err
	}
	var doc struct {
		Kernels []struct {
			Name   string      `json:"name"`
			Size   int         `json:"size"`
			Values [][]float64 `json:"values"`
		} `json:"kernels"`
	}
	if err := json.Unmarshal(b, &doc); err != nil {
		return nil, fmt.Errorf("benchwork: %s: %v", path, err)
	}
	var out []Kernel
	for _, k := range doc.Kernels {
		w := make([]float64, 0, k.Size*k.Size)
		for _, row := range k.Values {
			w = append(w, row...)
		}
		if len(w) != k.Size*k.Size {
			return nil, fmt.Errorf("benchwork: %s: kernel %s has %d values, want %d", path, k.Name, len(w), k.Size*k.Size)
		}
		out = append(out, Kernel{Name: k.Name, Size: k.Size, W: w})
	}
	return out, nil
}

// Peer is one general-purpose implementation of the front end timed in the
// reference work, images/s; 0 means not measured.
type Peer struct {
	Name                       string
	MNIST1, MNIST2, Big1, Big2 float64
}

// Figure is one figure a general-purpose library reached on the reference
// work.
type Figure struct {
	Section string  `json:"section"` // "frontend", "sparse" or "classifier"
	What    string  `json:"what"`    // what was measured, in the library's terms
	Library string  `json:"library"` // e.g. "PyTorch"
	Version string  `json:"version"` // e.g. "1.13"
	Value   float64 `json:"value"`   // the figure, or the low end of a range
	High    float64 `json:"high"`    // the high end of a range; 0 for a single figure
	Unit    string  `json:"unit"`    // e.g. "images/s", "s", "%"
	Threads int     `json:"threads"` // threads used; 0 when not stated
	Set     string  `json:"set"`     // "mnist", "crops256", "fashion-mnist" or "" (the section's own data)
}

// Figures returns the embedded peer figures of the reference work (its
// sections 1-3: front end, sparse coding, classifier peer) and the source
// they were measured in.
func Figures() ([]Figure, string, error) {
	b, _, err := ReadFile("", "peers.json")
	if err != nil {
		return nil, "", err
	}
	var doc struct {
		Source  string   `json:"source"`
		Figures []Figure `json:"figures"`
	}
	if err := json.Unmarshal(b, &doc); err != nil {
		return nil, "", fmt.Errorf("benchwork: %s peers.json: %v", Embedded, err)
	}
	return doc.Figures, doc.Source, nil
}

// Peers returns the front-end peers: from the embedded figures when dir is
// "", else parsed from the table of dir's README.md (its section 1).
func Peers(dir string) ([]Peer, error) {
	if dir == "" {
		figs, _, err := Figures()
		if err != nil {
			return nil, err
		}
		var out []Peer
		at := map[string]int{}
		for _, f := range figs {
			if f.Section != "frontend" {
				continue
			}
			name := f.Library + " " + f.Version + " " + f.What
			k, ok := at[name]
			if !ok {
				k = len(out)
				at[name] = k
				out = append(out, Peer{Name: name})
			}
			p := &out[k]
			switch {
			case f.Set == "mnist" && f.Threads == 1:
				p.MNIST1 = f.Value
			case f.Set == "mnist" && f.Threads == 2:
				p.MNIST2 = f.Value
			case f.Set == "crops256" && f.Threads == 1:
				p.Big1 = f.Value
			case f.Set == "crops256" && f.Threads == 2:
				p.Big2 = f.Value
			default:
				return nil, fmt.Errorf("benchwork: %s peers.json: front-end figure %q has set %q and %d threads, want mnist or crops256 at 1 or 2", Embedded, name, f.Set, f.Threads)
			}
		}
		if len(out) == 0 {
			return nil, fmt.Errorf("benchwork: %s peers.json: no front-end figures", Embedded)
		}
		return out, nil
	}
	b, path, err := ReadFile(dir, "README.md")
	if err != nil {
		return nil, err
	}
	var out []Peer
	for _, line := range strings.Split(string(b), "\n") {
		cells := strings.Split(strings.Trim(strings.TrimSpace(line), "|"), "|")
		if len(cells) != 5 || strings.HasPrefix(strings.TrimSpace(cells[1]), "-") {
			continue
		}
		var v [4]float64
		ok := true
		for i := 0; i < 4; i++ {
			c := strings.TrimSpace(strings.ReplaceAll(cells[i+1], ",", ""))
			if c == "—" || c == "-" {
				continue
			}
			f, err := strconv.ParseFloat(c, 64)
			if err != nil {
				ok = false
				break
			}
			v[i] = f
		}
		if ok {
			out = append(out, Peer{Name: strings.TrimSpace(cells[0]), MNIST1: v[0], MNIST2: v[1], Big1: v[2], Big2: v[3]})
		}
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("benchwork: %s: no peer table found", path)
	}
	return out, nil
}

// Fastest returns the peer with the highest figure for the size (28 or
// 256) and thread count (1 or 2), and that figure.
func Fastest(peers []Peer, side, threads int) (Peer, float64) {
	var best Peer
	var bv float64
	for _, p := range peers {
		v := p.MNIST1
		switch {
		case side == 28 && threads == 2:
			v = p.MNIST2
		case side != 28 && threads == 1:
			v = p.Big1
		case side != 28:
			v = p.Big2
		}
		if v > bv {
			best, bv = p, v
		}
	}
	return best, bv
}

// Median runs fn once to warm up, then repeats times, and returns the
// median wall time — the reference README's protocol (5 repeats).
func Median(repeats int, fn func()) time.Duration {
	fn()
	d := make([]time.Duration, repeats)
	for i := range d {
		t0 := time.Now()
		fn()
		d[i] = time.Since(t0)
	}
	sort.Slice(d, func(i, j int) bool { return d[i] < d[j] })
	return d[len(d)/2]
}
