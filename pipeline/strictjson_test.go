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
	if err := decodeStrict([]byte(`{"HEAD":{"Epochs":4}}`), &v, "config"); err != nil || v.Head.Epochs != 4 {
		t.Errorf("case-insensitive keys (as encoding/json): %v, %+v", err, v)
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
