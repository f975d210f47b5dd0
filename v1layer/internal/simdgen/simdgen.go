// Package simdgen writes v1layer's generated SIMD loops: the 1-D pass
// blocks for each lane width, vector count, row count and number of filter
// sets, their row drivers, and the element-wise loops. The variants are
// listed here, their code is in simd.tmpl; v1layer's gen_simd.go writes the
// files (go generate ./v1layer) and TestGeneratedSIMDCurrent checks that
// the committed files are what Files returns.
//
// The generator is plain Go (text/template, go/format): it builds and runs
// without GOEXPERIMENT=simd, though its output compiles only with it.
package simdgen

import (
	"bytes"
	_ "embed"
	"fmt"
	"go/format"
	"strings"
	"text/template"
)

//go:embed simd.tmpl
var tmplText string

// block is one kernel of the 1-D passes: Rows rows of Vecs vectors of
// Lanes float32 each, for one filter set or (Paired) two over the same
// sources.
type block struct {
	Lanes, Vecs, Rows int
	Paired            bool
}

// Name is the kernel's Go name: blk<lanes>x<vecs>, with r<rows> for more
// than one row and a P for a paired kernel.
func (b block) Name() string {
	s := "blk"
	if b.Paired {
		s += "P"
	}
	s += fmt.Sprintf("%dx%d", b.Lanes, b.Vecs)
	if b.Rows > 1 {
		s += fmt.Sprintf("r%d", b.Rows)
	}
	return s
}

// Outs is the number of outputs per row.
func (b block) Outs() int { return b.Lanes * b.Vecs }

// LastOut is the offset of the last output of a row.
func (b block) LastOut() int { return b.Outs() - 1 }

// Ld and St are the hand-written vector load and store of the lane width.
func (b block) Ld() string { return fmt.Sprintf("ld%d", b.Lanes) }
func (b block) St() string { return fmt.Sprintf("st%d", b.Lanes) }

// Off is the byte offset of vector v in a row.
func (b block) Off(v int) int { return 4 * b.Lanes * v }

func (b block) RowList() []int { return seq(b.Rows) }
func (b block) VecList() []int { return seq(b.Vecs) }

// Acc names the accumulator of vector v in row r: a3 for one row, a13
// (row 1, vector 3) for several.
func (b block) Acc(set string, r, v int) string {
	if b.Rows == 1 {
		return fmt.Sprintf("%s%d", set, v)
	}
	return fmt.Sprintf("%s%d%d", set, r, v)
}

// Accs lists the accumulators of one filter set, row by row.
func (b block) Accs(set string) string {
	var names []string
	for r := range b.Rows {
		for v := range b.Vecs {
			names = append(names, b.Acc(set, r, v))
		}
	}
	return strings.Join(names, ", ")
}

// Ptr and Dst name row r's source and destination pointers.
func (b block) Ptr(r int) string { return b.rowName("p", r) }
func (b block) Dst(r int) string { return b.rowName("d", r) }

func (b block) rowName(s string, r int) string {
	if b.Rows == 1 {
		return s
	}
	return fmt.Sprintf("%s%d", s, r)
}

// sum is the row driver of one lane width: Loop repeats while a whole
// block fits, each of Steps runs once if it fits, Tail takes what is left
// (fewer outputs than the last step, at least 8).
type sum struct {
	Lanes int
	Loop  block
	Steps []block
	Tail  block
}

func (s sum) Name() string { return fmt.Sprintf("sum%d", s.Lanes) }

// StepsText lists the widths of Steps for the doc comment ("64, 32 and 16").
func (s sum) StepsText() string {
	var w []string
	for _, b := range s.Steps {
		w = append(w, fmt.Sprint(b.Outs()))
	}
	if len(w) < 2 {
		return strings.Join(w, "")
	}
	return strings.Join(w[:len(w)-1], ", ") + " and " + w[len(w)-1]
}

// elementwise is one element-wise loop: dst and the inputs Params (the
// portable loop Go takes the same arguments), the statements Body of one
// 8-lane step at i.
type elementwise struct {
	Name, Go string
	In       []string
	Body     []string
}

func (e elementwise) Params() string { return strings.Join(e.In, ", ") }

// Resliced cuts every input to n, the length of dst.
func (e elementwise) Resliced() string {
	s := make([]string, len(e.In))
	for i, v := range e.In {
		s[i] = v + "[:n]"
	}
	return strings.Join(s, ", ")
}

const load = "archsimd.LoadFloat32x8Slice"

// extremum is dst = op(in[0], …, in[k−1]) (op Max or Min) for k ≥ 2:
// every input but the last in a variable, the last loaded in the chain.
func extremum(name, goName, op string, in ...string) elementwise {
	vars := []string{"x", "y", "z", "w"}[:len(in)-1]
	var body []string
	for j, v := range vars {
		body = append(body, fmt.Sprintf("%s := %s(%s[i:])", v, load, in[j]))
	}
	expr := vars[0]
	for _, v := range vars[1:] {
		expr += fmt.Sprintf(".%s(%s)", op, v)
	}
	expr += fmt.Sprintf(".%s(%s(%s[i:])).StoreSlice(dst[i:])", op, load, in[len(in)-1])
	return elementwise{Name: name, Go: goName, In: in, Body: append(body, expr)}
}

// maxEnergySq is dst = max over the k even/odd pairs of e²+o², pairs in
// order; the inputs are e0…e(k−1), o0…o(k−1).
func maxEnergySq(name, goName string, k int) elementwise {
	var in []string
	for _, s := range []string{"e", "o"} {
		for j := range k {
			in = append(in, fmt.Sprintf("%s%d", s, j))
		}
	}
	var body []string
	for j := range k {
		op := "="
		if j == 0 {
			op = ":="
		}
		body = append(body,
			fmt.Sprintf("a %s %s(e%d[i:])", op, load, j),
			fmt.Sprintf("b %s %s(o%d[i:])", op, load, j))
		sq := "a.Mul(a).Add(b.Mul(b))"
		switch j {
		case 0:
			body = append(body, "v := "+sq)
		case k - 1:
			body = append(body, fmt.Sprintf("v.Max(%s).StoreSlice(dst[i:])", sq))
		default:
			body = append(body, fmt.Sprintf("v = v.Max(%s)", sq))
		}
	}
	return elementwise{Name: name, Go: goName, In: in, Body: body}
}

// convData lists the 1-D pass variants: single-row blocks of 6, 4, 2 and 1
// vectors (six accumulators hide the FMA latency; Go 1.26 allocates 15
// vector registers and more would spill) for 8 and 16 lanes, three-row
// blocks of 2 and 1 vectors for rows of at most 32 (sum3SIMD), and the
// paired 16-lane blocks of 4…1 vectors (vsum2x16).
func convData() any {
	one := func(lanes, vecs int) block { return block{Lanes: lanes, Vecs: vecs, Rows: 1} }
	var sums []sum
	for _, lanes := range []int{8, 16} {
		sums = append(sums, sum{
			Lanes: lanes,
			Loop:  one(lanes, 6),
			Steps: []block{one(lanes, 4), one(lanes, 2)},
			Tail:  one(8, 1),
		})
	}
	sums[1].Steps = append(sums[1].Steps, one(16, 1))
	var blocks []block
	seen := map[string]bool{}
	for _, s := range sums {
		for _, b := range append(append([]block{s.Loop}, s.Steps...), s.Tail) {
			if !seen[b.Name()] {
				seen[b.Name()] = true
				blocks = append(blocks, b)
			}
		}
	}
	blocks = append(blocks, block{Lanes: 8, Vecs: 2, Rows: 3}, block{Lanes: 8, Vecs: 1, Rows: 3})
	var pairs []block
	for _, v := range []int{4, 3, 2, 1} {
		pairs = append(pairs, block{Lanes: 16, Vecs: v, Rows: 1, Paired: true})
	}
	return struct {
		Unsafe        bool
		Sums          []sum
		Blocks, Pairs []block
	}{true, sums, blocks, pairs}
}

// elementwiseData lists the element-wise loops.
func elementwiseData() any {
	funcs := []elementwise{
		{Name: "energySIMD", Go: "energyGo", In: []string{"e", "o"}, Body: []string{
			"a := " + load + "(e[i:])",
			"b := " + load + "(o[i:])",
			"a.Mul(a).Add(b.Mul(b)).Sqrt().StoreSlice(dst[i:])",
		}},
		{Name: "maxIntoSIMD", Go: "maxIntoGo", In: []string{"src"}, Body: []string{
			"a := " + load + "(dst[i:])",
			"a.Max(" + load + "(src[i:])).StoreSlice(dst[i:])",
		}},
		extremum("max2SIMD", "max2Go", "Max", "a", "b"),
		extremum("max3SIMD", "max3Go", "Max", "a", "b", "c"),
		extremum("min2SIMD", "min2Go", "Min", "a", "b"),
		extremum("min3SIMD", "min3Go", "Min", "a", "b", "c"),
		maxEnergySq("esq2SIMD", "esq2Go", 2),
		maxEnergySq("esq3SIMD", "esq3Go", 3),
	}
	return struct {
		Unsafe bool
		Funcs  []elementwise
	}{false, funcs}
}

func seq(n int) []int {
	s := make([]int, n)
	for i := range s {
		s[i] = i
	}
	return s
}

// Files returns the generated files, by name in v1layer's directory, each
// gofmt'ed.
func Files() (map[string][]byte, error) {
	t, err := template.New("simd").Funcs(template.FuncMap{
		"dec": func(i int) int { return i - 1 },
	}).Parse(tmplText)
	if err != nil {
		return nil, fmt.Errorf("simdgen: parsing simd.tmpl: %v", err)
	}
	out := map[string][]byte{}
	for _, f := range []struct {
		name, tmpl string
		data       any
	}{
		{"conv_gen_amd64.go", "conv", convData()},
		{"elementwise_gen_amd64.go", "elementwise", elementwiseData()},
	} {
		var buf bytes.Buffer
		if err := t.ExecuteTemplate(&buf, f.tmpl, f.data); err != nil {
			return nil, fmt.Errorf("simdgen: %s: %v", f.name, err)
		}
		src, err := format.Source(buf.Bytes())
		if err != nil {
			return nil, fmt.Errorf("simdgen: %s: formatting the generated code: %v", f.name, err)
		}
		out[f.name] = src
	}
	return out, nil
}
