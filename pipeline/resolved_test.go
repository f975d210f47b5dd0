package pipeline

import (
	"bytes"
	"encoding/json"
	"flag"
	"os"
	"testing"
)

var updateResolved = flag.Bool("update-resolved", false, "rewrite testdata/pipeline/resolved_configs.json from DefaultConfig and the presets")

// resolvedGolden holds DefaultConfig() and every Preset as JSON, written by
// the code before defaults became per field (commit 73f7b17, with
// -update-resolved). The recognition figures in the README were measured
// with these settings, so a change of the defaults rule must leave them
// exactly as they are. One change since was made on purpose and rewritten
// with -update-resolved: the digits and garments presets' input.denoise
// "auto" → "smooth" (issue 12's rule, TestInputSuiteValidation), after
// which their README figures were measured again.
const resolvedGolden = "../testdata/pipeline/resolved_configs.json"

func resolvedConfigs(t *testing.T) map[string]json.RawMessage {
	out := map[string]json.RawMessage{}
	for _, name := range PresetNames() {
		c, err := Preset(name)
		if err != nil {
			t.Fatal(err)
		}
		b, err := json.Marshal(c)
		if err != nil {
			t.Fatal(err)
		}
		out["preset "+name] = b
	}
	b, err := json.Marshal(DefaultConfig())
	if err != nil {
		t.Fatal(err)
	}
	out["DefaultConfig"] = b
	return out
}

// TestResolvedConfigsUnchanged: DefaultConfig and each preset resolve to
// the settings the published figures were measured with.
func TestResolvedConfigsUnchanged(t *testing.T) {
	got := resolvedConfigs(t)
	if *updateResolved {
		b, err := json.MarshalIndent(got, "", " ")
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(resolvedGolden, append(b, '\n'), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	b, err := os.ReadFile(resolvedGolden)
	if err != nil {
		t.Fatal(err)
	}
	var want map[string]json.RawMessage
	if err := json.Unmarshal(b, &want); err != nil {
		t.Fatal(err)
	}
	if len(want) != len(got) {
		t.Errorf("%d resolved configs; the golden file has %d", len(got), len(want))
	}
	for name, w := range want {
		var a, b bytes.Buffer
		if err := json.Compact(&a, w); err != nil {
			t.Fatal(err)
		}
		if err := json.Compact(&b, got[name]); err != nil {
			t.Fatal(err)
		}
		if a.String() != b.String() {
			t.Errorf("%s resolves to\n%s\nwant\n%s", name, b.String(), a.String())
		}
	}
}
