// Package benchwork loads the reference work of ../shared/bench (see its
// README.md) so that striate's benchmarks and the `striate bench` command
// time exactly what the general-purpose peers were timed on: the MNIST
// test set, 64 photo crops of 256×256 read from data/crops256_8x8.png, the
// front-end kernels of filterbank_kernels.json, and the peers' published
// throughputs.
package benchwork

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"image"
	"image/png"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/striate/striate/datasets"
)

// DefaultRel is where the reference folder sits relative to the repository root.
const DefaultRel = "../shared/bench"

// FindDir returns dir if it is non-empty, else DefaultRel resolved against
// the root of the striate module found by walking up from the working
// directory. It checks that filterbank.json is there and says how to fix it
// otherwise.
func FindDir(dir string) (string, error) {
	if dir == "" {
		root, err := moduleRoot()
		if err != nil {
			return "", fmt.Errorf("benchwork: no reference folder given and %v; pass the folder holding filterbank.json (e.g. --ref ../shared/bench)", err)
		}
		dir = filepath.Join(root, DefaultRel)
	}
	if _, err := os.Stat(filepath.Join(dir, "filterbank.json")); err != nil {
		return "", fmt.Errorf("benchwork: %s is not the reference folder (no filterbank.json: %v); pass the folder that holds filterbank.json, filterbank_kernels.json, README.md and data/", dir, err)
	}
	return dir, nil
}

func moduleRoot() (string, error) {
	d, err := os.Getwd()
	if err != nil {
		return "", err
	}
	for {
		b, err := os.ReadFile(filepath.Join(d, "go.mod"))
		if err == nil && strings.Contains(string(b), "module github.com/striate/striate") {
			return d, nil
		}
		parent := filepath.Dir(d)
		if parent == d {
			return "", errors.New("the working directory is not inside the striate repository")
		}
		d = parent
	}
}

// Set is one input set of the reference work.
type Set struct {
	Name   string
	H, W   int
	Images [][]float32 // row-major H×W, values in [0,1]
	Source string      // where the images came from
}

// Crops reads the 64 crops of 256×256 from data/crops256_8x8.png (crop i at
// tile row i/8, column i%8), pixel/255. n > 0 keeps the first n.
func Crops(dir string, n int) (*Set, error) {
	path := filepath.Join(dir, "data", "crops256_8x8.png")
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("benchwork: %v", err)
	}
	defer f.Close()
	img, err := png.Decode(bufio.NewReader(f))
	if err != nil {
		return nil, fmt.Errorf("benchwork: %s: %v", path, err)
	}
	g, ok := img.(*image.Gray)
	if !ok || g.Rect.Dx() != 2048 || g.Rect.Dy() != 2048 {
		return nil, fmt.Errorf("benchwork: %s: want an 8-bit grey 2048×2048 PNG, got %T %v", path, img, img.Bounds())
	}
	const side, tiles = 256, 64
	if n <= 0 || n > tiles {
		n = tiles
	}
	s := &Set{Name: "crops 256×256", H: side, W: side, Source: path}
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
	path := filepath.Join(dir, "filterbank_kernels.json")
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("benchwork: %v", err)
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

// Peer is one general-purpose implementation timed in the reference
// README, images/s; 0 means not measured.
type Peer struct {
	Name                       string
	MNIST1, MNIST2, Big1, Big2 float64
}

// Peers parses the front-end table of README.md (section 1).
func Peers(dir string) ([]Peer, error) {
	path := filepath.Join(dir, "README.md")
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("benchwork: %v", err)
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
