package pipeline

import (
	"bytes"
	"encoding/binary"
	"errors"
	"os"
	"strings"
	"testing"

	"github.com/striate/striate/internal/hostiletest"
)

// withConfig returns model file b with its header's configuration text
// edited (old → new) and the lengths and checksum fixed: a hostile file
// that passes every container check.
func withConfig(t *testing.T, b []byte, old, new string) []byte {
	t.Helper()
	hlen := int(binary.LittleEndian.Uint32(b[12:]))
	hdr := string(b[prefixLen : prefixLen+hlen])
	if !strings.Contains(hdr, old) {
		t.Fatalf("header has no %q", old)
	}
	hdr = strings.Replace(hdr, old, new, 1)
	data := b[prefixLen+hlen+int(pad(int64(prefixLen+hlen))) : len(b)-checksumLen]
	var out []byte
	out = append(out, b[:12]...)
	out = binary.LittleEndian.AppendUint32(out, uint32(len(hdr)))
	out = append(out, hdr...)
	for len(out)%dataAlign != 0 {
		out = append(out, 0)
	}
	out = append(out, data...)
	return resum(append(out, make([]byte, checksumLen)...))
}

// TestHostileModels: the hostile model corpus — truncations and byte edits
// at 120 places of the committed small model (with and without a fixed
// checksum),
// configurations edited to the edge of every range with a valid checksum,
// and the generated 17 MB stacked model — through Load: no panic, every
// refusal a *FileError, no input allocating more than hostiletest.AllocBound.
func TestHostileModels(t *testing.T) {
	b, err := os.ReadFile(smallModel)
	if err != nil {
		t.Fatal(err)
	}
	hostiletest.Sweep(t, "model mutants", hostiletest.Mutants(b, 120, resum), func(in []byte) error {
		_, err := Load(bytes.NewReader(in))
		return err
	}, isFileError)
	var inputs [][]byte
	for _, e := range [][2]string{
		{`"height":28,"width":28`, `"height":1024,"width":1024`},
		{`"height":28,"width":28`, `"height":-28,"width":28`},
		{`"height":28,"width":28`, `"height":1e99,"width":28`},
		{`"k":16`, `"k":4096`},
		{`"k":16`, `"k":-16`},
		{`"patch_size":3`, `"patch_size":32`},
		{`"patches":4000`, `"patches":4194304`},
		{`"pool":{`, `"pool":{"size":16,"stride":1,`},
		{`"templates":[`, `"templates":[{"k":4096,"patch_size":1},{"k":4096,"patch_size":1},`},
		{`"templates":[{`, `"templates":[{"grids":[16,16,16,16,16,16,16,16,16,16,16,16,16,16,16,16],"scales":[4,4,4,4,4,4,4,4],`},
		{`"input":{`, `"Input":{`},
		{`"input":{`, `"input":null,"x":{`},
	} {
		inputs = append(inputs, withConfig(t, b, e[0], e[1]))
	}
	big, err := os.ReadFile(writeHostileModel(t))
	if err != nil {
		t.Fatal(err)
	}
	inputs = append(inputs, big)
	// Some edits stay valid (a larger input with 16 templates, the largest
	// pyramid, a patch count that only a fit reads): those must load within
	// the work-size limit; the others must be refused.
	refused := hostiletest.Sweep(t, "crafted models", inputs, func(in []byte) error {
		m, err := Load(bytes.NewReader(in))
		if err == nil {
			if w, _ := m.Plan().PredictWork(); w.Bytes > DefaultMaxWorkBytes {
				t.Errorf("a crafted model loaded with a work size of %d bytes", w.Bytes)
			}
		}
		return err
	}, isFileError)
	if refused < len(inputs)-3 {
		t.Errorf("%d of %d crafted hostile models accepted; want at most the 3 valid ones", len(inputs)-refused, len(inputs))
	}
}

func isFileError(err error) bool { var fe *FileError; return errors.As(err, &fe) }

// TestHostileConfigs: configurations at and past the edge of every range,
// of the wrong types, deeply nested or numerically absurd, through
// ParseConfig: no panic, every refusal a "pipeline:" error, none allocating
// more than hostiletest.AllocBound.
func TestHostileConfigs(t *testing.T) {
	var inputs [][]byte
	for _, s := range []string{
		``, `{`, `[]`, `"x"`, `1e999`, `{"input":{"height":1e999}}`,
		`{"input":{"height":1024,"width":1024}}`,
		`{"input":{"height":1024,"width":1024},"templates":[]}`,
		`{"input":{"height":1024,"width":1024},"templates":[],"pool":{"size":1},"head":{"hidden":16384}}`,
		`{"templates":[{"k":4096,"patch_size":32}]}`,
		`{"templates":[{"k":4096,"patch_size":1},{"k":4096,"patch_size":1},{"k":4096,"patch_size":1},{"k":4096,"patch_size":1}]}`,
		`{"templates":[{"patches":4194304}]}`,
		`{"templates":[{"method":"sparse","k":4096,"patches":4194304}]}`,
		`{"head":{"batch":-1}}`, `{"head":{"hidden":1e10}}`, `{"head":{"epochs":-5}}`,
		`{"unlabeled":2147483647,"input":{"height":256,"width":256}}`,
		`{"learn_bank":{"dict":{"atoms":1000000}}}`,
		`{"front":{"gabor":{"scales":1000}}}`,
		`{"head":` + strings.Repeat(`{"a":`, 5000) + `1` + strings.Repeat(`}`, 5000) + `}`,
		`{"templates":` + strings.Repeat(`[`, 10000) + strings.Repeat(`]`, 10000) + `}`,
		"\xEF\xBB\xBF{}", `null`, `{"seed":-1}`, `{"mirror":"yes"}`,
	} {
		inputs = append(inputs, []byte(s))
	}
	refused := hostiletest.Sweep(t, "configs", inputs, func(in []byte) error {
		_, err := ParseConfig(bytes.NewReader(in))
		return err
	}, func(err error) bool { return strings.HasPrefix(err.Error(), "pipeline: ") })
	if refused != len(inputs) {
		t.Errorf("%d of %d hostile configurations accepted", len(inputs)-refused, len(inputs))
	}
}
