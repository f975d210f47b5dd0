package pipeline

import (
	"strings"
	"testing"
)

type innerCfg struct {
	Epochs int     `json:"epochs"`
	LR     float64 `json:"lr,omitempty"`
}

type outerCfg struct {
	Name   string     `json:"name"`
	Head   innerCfg   `json:"head"`
	Layers []innerCfg `json:"layers"`
	Ptr    *innerCfg  `json:"ptr,omitempty"`
}

func TestDecodeStrictNamesUnknownKey(t *testing.T) {
	cases := []struct{ in, path, where string }{
		{`{"nmae":"x"}`, `"nmae"`, "at the top level: head, layers, name, ptr"},
		{`{"head":{"epoch":3}}`, `"head.epoch"`, `in "head": epochs, lr`},
		{`{"layers":[{"epochs":1},{"lr":1,"rate":2}]}`, `"layers[1].rate"`, `in "layers[1]": epochs, lr`},
		{`{"ptr":{"x":1}}`, `"ptr.x"`, `in "ptr"`},
	}
	for _, c := range cases {
		var v outerCfg
		err := decodeStrict([]byte(c.in), &v, "config")
		if err == nil {
			t.Errorf("%s: accepted", c.in)
			continue
		}
		msg := err.Error()
		if !strings.Contains(msg, "key "+c.path+" is unknown") || !strings.Contains(msg, c.where) {
			t.Errorf("%s: error %q; want it to name %s and list %s", c.in, msg, c.path, c.where)
		}
	}
}

func TestDecodeStrictOther(t *testing.T) {
	var v outerCfg
	if err := decodeStrict([]byte(`{"head":{"epochs":4}}`), &v, "config"); err != nil || v.Head.Epochs != 4 {
		t.Errorf("exact keys: %v, %+v", err, v)
	}
	err := decodeStrict([]byte("{\n \"name\": 3}"), &v, "config")
	if err == nil || !strings.Contains(err.Error(), `"name"`) || !strings.Contains(err.Error(), "string") {
		t.Errorf("type error: %v", err)
	}
	err = decodeStrict([]byte("{\n \"name\": }"), &v, "config")
	if err == nil || !strings.Contains(err.Error(), "line 2") {
		t.Errorf("syntax error: %v; want the line", err)
	}
	err = decodeStrict([]byte(`{} {}`), &v, "config")
	if err == nil || !strings.Contains(err.Error(), "extra data") {
		t.Errorf("trailing object: %v", err)
	}
}

// TestDecodeStrictKeys: keys match case-sensitively (encoding/json alone
// would take "HEAD" for "head"), a repeated key is an error (encoding/json
// alone keeps the last), null is refused except where Go's nil has a
// documented meaning, and a byte-order mark gets its own message. Each
// error names the JSON path.
func TestDecodeStrictKeys(t *testing.T) {
	cases := []struct{ in, want string }{
		{`{"HEAD":{"epochs":4}}`, `key "HEAD" is unknown: keys are case-sensitive; write "head"`},
		{`{"head":{"Epochs":4}}`, `key "head.Epochs" is unknown: keys are case-sensitive; write "epochs"`},
		{`{"layers":[{"epochs":1},{"LR":2}]}`, `key "layers[1].LR" is unknown: keys are case-sensitive; write "lr"`},
		{`{"name":"a","name":"b"}`, `key "name" appears twice`},
		{`{"head":{"epochs":1,"lr":1,"epochs":2}}`, `key "head.epochs" appears twice`},
		{`null`, `config is null; want a JSON object`},
		{`{"head":null}`, `key "head" is null; leave the key out`},
		{`{"head":{"epochs":null}}`, `key "head.epochs" is null`},
		{"\xEF\xBB\xBF{}", "byte-order mark"},
	}
	for _, c := range cases {
		var v outerCfg
		err := decodeStrict([]byte(c.in), &v, "config")
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v; want %q", c.in, err, c.want)
		}
	}
	var v outerCfg
	if err := decodeStrict([]byte(`{"ptr":null,"layers":null,"name":"x"}`), &v, "config"); err != nil || v.Ptr != nil || v.Layers != nil {
		t.Errorf("null for a pointer and a list (same as absent): %v, %+v", err, v)
	}
}

// TestParseConfigStrict: the same rules through ParseConfig, on the
// pipeline's own keys, and fields that used to be checked only inside Fit
// (a head batch of −1 failed after 19 s of feature extraction) are refused
// at parse time with their JSON path.
func TestParseConfigStrict(t *testing.T) {
	for in, want := range map[string]string{
		`{"Head":{"epochs":3}}`:                     `"Head" is unknown: keys are case-sensitive; write "head"`,
		`{"head":{"epochs":3},"head":{"epochs":4}}`: `"head" appears twice`,
		`null`:                      "is null",
		"\xEF\xBB\xBF{\"head\":{}}": "byte-order mark",
		`{"head":{"batch":-1}}`:     "head.batch",
		`{"templates":[{"k":0,"patch_size":99}]}`:        "templates[0].patch_size",
		`{"templates":[{"patches":10,"k":64}]}`:          "templates[0].patches",
		`{"input":{"height":28,"width":28,"height":32}}`: `"input.height" appears twice`,
	} {
		_, err := ParseConfig(strings.NewReader(in))
		if err == nil || !strings.Contains(err.Error(), want) {
			t.Errorf("%q: %v; want %q", in, err, want)
		}
	}
	if c, err := ParseConfig(strings.NewReader(`{"templates":null,"learn_bank":null}`)); err != nil || c.Templates != nil {
		t.Errorf("null templates (documented: the default layers): %v, %+v", err, c.Templates)
	}
}
