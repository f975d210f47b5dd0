package pipeline

import (
	"reflect"
	"strings"
	"testing"
)

func TestConfigJSONRoundTrip(t *testing.T) {
	c := DefaultConfig()
	b, err := c.MarshalIndent()
	if err != nil {
		t.Fatal(err)
	}
	got, err := ParseConfig(strings.NewReader(string(b)))
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got.withDefaults(), c) {
		t.Fatalf("JSON round trip changed the default config:\n%s", b)
	}
	// The zero value means the defaults.
	if !reflect.DeepEqual(Config{}.withDefaults(), c) {
		t.Fatal("Config{} does not mean DefaultConfig()")
	}
}

func TestConfigUnknownKeys(t *testing.T) {
	cases := map[string]string{
		`{"hed":{}}`:                            `"hed"`,
		`{"head":{"epoch":3}}`:                  `"head.epoch"`,
		`{"front":{"gabor":{"orientation":8}}}`: `"front.gabor.orientation"`,
		`{"templates":[{"k":8,"patchsize":3}]}`: `"templates[0].patchsize"`,
		`{"input":{"hieght":32}}`:               `"input.hieght"`,
	}
	for in, key := range cases {
		_, err := ParseConfig(strings.NewReader(in))
		if err == nil || !strings.Contains(err.Error(), "key "+key+" is unknown") {
			t.Errorf("%s: error %v; want it to name %s", in, err, key)
		}
	}
}

func TestConfigValidate(t *testing.T) {
	cases := map[string]string{
		`{"input":{"height":4}}`:                                "input size",
		`{"input":{"normalize":"zscore"}}`:                      "input.normalize",
		`{"input":{"denoise":"median5"}}`:                       "input.denoise",
		`{"pool":{"size":40}}`:                                  "pool.size",
		`{"pool":{"size":2,"stride":3}}`:                        "pool.stride",
		`{"pool":{"size":2,"op":"sum"}}`:                        "pool.op",
		`{"templates":[{"patch_size":20}]}`:                     "patch_size 20",
		`{"guard":{"min_std":2}}`:                               "guard.min_std",
		`{"unlabeled":-5}`:                                      "unlabeled",
		`{"front":{"gabor":{"orientations":99}}}`:               "pipeline: front: v1layer",
		`{"learn_bank":{"patch_size":40}}`:                      "learn_bank.patch_size",
		`{"templates":[{},{},{},{},{}]}`:                        "template layers",
		`{"input":{"height":16,"width":16},"pool":{"size":16}}`: "pool.size 16",
	}
	for in, want := range cases {
		_, err := ParseConfig(strings.NewReader(in))
		if err == nil || !strings.Contains(err.Error(), want) || !strings.HasPrefix(err.Error(), "pipeline: ") {
			t.Errorf("%s: error %v; want a pipeline error mentioning %q", in, err, want)
		}
	}
	if _, err := ParseConfig(strings.NewReader(`{"templates":[], "head":{"kind":"softmax"}}`)); err != nil {
		t.Errorf("a valid config was rejected: %v", err)
	}
}
