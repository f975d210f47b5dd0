package datasets

import (
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// pngTol is the round trip's largest pixel change: frames are stored as
// round(255·v), so a value moves by at most half a grey step (plus float32
// rounding).
const pngTol = 0.5/255 + 1e-6

// writeTestFolder writes six scenes (textured, with lint, some empty) to a
// new folder and returns it with the scenes.
func writeTestFolder(t testing.TB) (string, []Scene, *Set) {
	t.Helper()
	set := inkSet(60)
	b := mustBuilder(t, set, SceneConfig{W: 90, H: 70, Background: Texture, Lint: 3, EmptyFrac: 0.3, Seed: 5})
	scenes := b.Scenes(0, 6)
	dir := filepath.Join(t.TempDir(), "belt")
	if err := WriteSceneFolder(dir, set.Classes, scenes); err != nil {
		t.Fatal(err)
	}
	return dir, scenes, set
}

// TestSceneFolderRoundTrip checks write then read: the same classes, frame
// sizes and items (Source becomes −1), and pixels within half a grey step.
func TestSceneFolderRoundTrip(t *testing.T) {
	dir, scenes, set := writeTestFolder(t)
	f, err := ReadSceneFolder(dir)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(f.Classes, set.Classes) || len(f.Frames) != len(scenes) {
		t.Fatalf("read %v classes, %d frames; wrote %v, %d", f.Classes, len(f.Frames), set.Classes, len(scenes))
	}
	var s Scene
	items := 0
	for i, want := range scenes {
		if _, err := f.Frame(&s, i); err != nil {
			t.Fatal(err)
		}
		if s.W != want.W || s.H != want.H || len(s.Items) != len(want.Items) {
			t.Fatalf("frame %d: %d×%d with %d items, wrote %d×%d with %d", i, s.W, s.H, len(s.Items), want.W, want.H, len(want.Items))
		}
		for j, it := range s.Items {
			w := want.Items[j]
			if it.Box != w.Box || it.Class != w.Class || it.Source != -1 {
				t.Errorf("frame %d item %d: read %+v, wrote %+v", i, j, it, w)
			}
		}
		items += len(s.Items)
		for p := range s.Pix {
			if d := math.Abs(float64(s.Pix[p] - want.Pix[p])); d > pngTol {
				t.Fatalf("frame %d pixel %d: read %v, wrote %v", i, p, s.Pix[p], want.Pix[p])
			}
		}
	}
	if items == 0 {
		t.Error("the test folder holds no items")
	}
	if err := WriteSceneFolder(dir, set.Classes, scenes); err == nil || !strings.Contains(err.Error(), "already exists") {
		t.Errorf("writing over a folder: %v", err)
	}
}

// editIndex rewrites the folder's scenes.json through edit.
func editIndex(t *testing.T, dir string, edit func(m map[string]any)) {
	t.Helper()
	p := filepath.Join(dir, SceneIndex)
	raw, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(raw, &m); err != nil {
		t.Fatal(err)
	}
	edit(m)
	raw, _ = json.Marshal(m)
	if err := os.WriteFile(p, raw, 0o644); err != nil {
		t.Fatal(err)
	}
}

// firstItemFrame returns the index of the first frame with an item.
func firstItemFrame(scenes []Scene) int {
	return slices.IndexFunc(scenes, func(s Scene) bool { return len(s.Items) > 0 })
}

// TestSceneFolderErrors checks that every kind of bad folder gives its
// error, naming the file at fault, the JSON field where there is one, and a
// fix.
func TestSceneFolderErrors(t *testing.T) {
	frame := func(m map[string]any, i int) map[string]any { return m["frames"].([]any)[i].(map[string]any) }
	item := func(m map[string]any, i int) map[string]any {
		return frame(m, i)["items"].([]any)[0].(map[string]any)
	}
	cases := []struct {
		name   string
		break_ func(t *testing.T, dir string, scenes []Scene)
		kind   error
		file   string // base name the message must hold
		field  string // JSON path the message must hold
		fix    string // part of the detail or fix
	}{
		{"missing index", func(t *testing.T, dir string, _ []Scene) { os.Remove(filepath.Join(dir, SceneIndex)) },
			ErrSceneIndexMissing, SceneIndex, "", "WriteSceneFolder"},
		{"syntax", func(t *testing.T, dir string, _ []Scene) {
			p := filepath.Join(dir, SceneIndex)
			raw, _ := os.ReadFile(p)
			os.WriteFile(p, []byte(strings.Replace(string(raw), ":", ";", 3)), 0o644)
		}, ErrSceneIndexMalformed, SceneIndex, "", "line 2"},
		{"cut short", func(t *testing.T, dir string, _ []Scene) {
			p := filepath.Join(dir, SceneIndex)
			raw, _ := os.ReadFile(p)
			os.WriteFile(p, raw[:len(raw)/2], 0o644)
		}, ErrSceneIndexMalformed, SceneIndex, "", "whole index"},
		{"unknown field", func(t *testing.T, dir string, _ []Scene) {
			editIndex(t, dir, func(m map[string]any) { frame(m, 0)["colour"] = "red" })
		}, ErrSceneIndexMalformed, SceneIndex, "", "only the fields"},
		{"wrong type", func(t *testing.T, dir string, _ []Scene) {
			editIndex(t, dir, func(m map[string]any) { frame(m, 0)["width"] = "ninety" })
		}, ErrSceneIndexMalformed, SceneIndex, "frames.width", "type"},
		{"two values", func(t *testing.T, dir string, _ []Scene) {
			p := filepath.Join(dir, SceneIndex)
			raw, _ := os.ReadFile(p)
			os.WriteFile(p, append(raw, "{}"...), 0o644)
		}, ErrSceneIndexMalformed, SceneIndex, "", "exactly one"},
		{"version", func(t *testing.T, dir string, _ []Scene) {
			editIndex(t, dir, func(m map[string]any) { m["version"] = 9 })
		}, ErrSceneIndexMalformed, SceneIndex, "version", "reads version 1"},
		{"escaping path", func(t *testing.T, dir string, _ []Scene) {
			editIndex(t, dir, func(m map[string]any) { frame(m, 1)["file"] = "../elsewhere.png" })
		}, ErrSceneIndexMalformed, SceneIndex, "frames[1].file", "relative"},
		{"missing frame", func(t *testing.T, dir string, _ []Scene) { os.Remove(filepath.Join(dir, FrameName(2))) },
			ErrSceneFrameMissing, FrameName(2), "frames[2].file", "restore"},
		{"not an image", func(t *testing.T, dir string, _ []Scene) {
			os.WriteFile(filepath.Join(dir, FrameName(3)), []byte("not a picture"), 0o644)
		}, ErrSceneFrameBad, FrameName(3), "", "PNG"},
		{"size mismatch", func(t *testing.T, dir string, _ []Scene) {
			editIndex(t, dir, func(m map[string]any) { frame(m, 0)["height"] = 71 })
		}, ErrSceneFrameBad, FrameName(0), "frames[0]", "width and height"},
		{"box outside", func(t *testing.T, dir string, sc []Scene) {
			k := firstItemFrame(sc)
			editIndex(t, dir, func(m map[string]any) { item(m, k)["box"] = []int{10, 10, 91, 20} })
		}, ErrSceneBoxOutside, SceneIndex, ".items[0].box", "x1 ≤ 90"},
		{"empty box", func(t *testing.T, dir string, sc []Scene) {
			k := firstItemFrame(sc)
			editIndex(t, dir, func(m map[string]any) { item(m, k)["box"] = []int{10, 10, 10, 20} })
		}, ErrSceneBoxOutside, SceneIndex, ".items[0].box", "x0 < x1"},
		{"unknown class", func(t *testing.T, dir string, sc []Scene) {
			k := firstItemFrame(sc)
			editIndex(t, dir, func(m map[string]any) { item(m, k)["class"] = "zebra" })
		}, ErrSceneUnknownClass, SceneIndex, ".items[0].class", "add it"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir, scenes, _ := writeTestFolder(t)
			c.break_(t, dir, scenes)
			_, err := ReadSceneFolder(dir)
			var fe *SceneFolderError
			if !errors.Is(err, c.kind) || !errors.As(err, &fe) {
				t.Fatalf("error %v, want kind %v", err, c.kind)
			}
			msg := err.Error()
			if !strings.HasPrefix(msg, "datasets: ") || filepath.Base(fe.File) != c.file || !strings.Contains(msg, fe.File) ||
				!strings.Contains(msg, c.field) || !strings.Contains(msg, c.fix) || fe.Fix == "" {
				t.Errorf("message %q (file %s, fix %q): want file %s, field %q, fix holding %q", msg, fe.File, fe.Fix, c.file, c.field, c.fix)
			}
		})
	}
}

// TestSceneFrameLoadErrors checks that a frame broken after the index was
// read is reported by Frame, naming the file.
func TestSceneFrameLoadErrors(t *testing.T) {
	dir, _, _ := writeTestFolder(t)
	f, err := ReadSceneFolder(dir)
	if err != nil {
		t.Fatal(err)
	}
	os.Remove(filepath.Join(dir, FrameName(1)))
	if _, err := f.Frame(nil, 1); !errors.Is(err, ErrSceneFrameMissing) || !strings.Contains(err.Error(), FrameName(1)) {
		t.Errorf("removed frame: %v", err)
	}
	os.WriteFile(filepath.Join(dir, FrameName(2)), []byte("garbage"), 0o644)
	if _, err := f.Frame(nil, 2); !errors.Is(err, ErrSceneFrameBad) || !strings.Contains(err.Error(), FrameName(2)) {
		t.Errorf("garbage frame: %v", err)
	}
}

// TestWriteSceneFolderChecks checks that bad scenes are refused before
// anything is written.
func TestWriteSceneFolderChecks(t *testing.T) {
	good := Scene{W: 4, H: 4, Pix: make([]float32, 16), Items: []SceneItem{{Box: [4]int{0, 0, 2, 2}, Class: 1}}}
	for _, c := range []struct {
		name    string
		classes []string
		s       Scene
	}{
		{"no classes", nil, good},
		{"class out of range", []string{"a"}, good},
		{"box outside", []string{"a", "b"}, Scene{W: 4, H: 4, Pix: make([]float32, 16), Items: []SceneItem{{Box: [4]int{0, 0, 5, 2}}}}},
		{"pixels", []string{"a", "b"}, Scene{W: 4, H: 4, Pix: make([]float32, 15)}},
	} {
		dir := filepath.Join(t.TempDir(), "x")
		if err := WriteSceneFolder(dir, c.classes, []Scene{c.s}); err == nil || !strings.HasPrefix(err.Error(), "datasets: ") {
			t.Errorf("%s: error %v", c.name, err)
		}
		if _, err := os.Stat(dir); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("%s: the folder was created", c.name)
		}
	}
}

// FuzzSceneIndex feeds arbitrary bytes as scenes.json to a folder holding
// two real 90×70 frames: ReadSceneFolder must never panic, every failure must
// be a *SceneFolderError, and every success must hold only boxes inside their
// frames and classes that are listed.
func FuzzSceneIndex(f *testing.F) {
	dir, _, _ := writeTestFolder(f)
	if good, err := os.ReadFile(filepath.Join(dir, SceneIndex)); err == nil {
		f.Add(good)
		f.Add(good[:len(good)/3])
	}
	f.Add([]byte(`{"layout":"striate scene folder","version":1,"classes":["a"],"frames":[{"file":"frame-000000.png","width":90,"height":70,"items":[{"class":"a","box":[0,0,90,70]}]}]}`))
	f.Add([]byte(`{"layout":"striate scene folder","version":1,"classes":["a","a"],"frames":[]}`))
	f.Add([]byte(`[]`))
	f.Fuzz(func(t *testing.T, raw []byte) {
		d := t.TempDir()
		for i := range 2 {
			b, err := os.ReadFile(filepath.Join(dir, FrameName(i)))
			if err != nil {
				t.Skip("seed folder unavailable")
			}
			os.WriteFile(filepath.Join(d, FrameName(i)), b, 0o644)
		}
		os.WriteFile(filepath.Join(d, SceneIndex), raw, 0o644)
		sf, err := ReadSceneFolder(d)
		if err != nil {
			var fe *SceneFolderError
			if !errors.As(err, &fe) {
				t.Fatalf("error %v is not a *SceneFolderError", err)
			}
			return
		}
		for _, fr := range sf.Frames {
			for _, it := range fr.Items {
				b := it.Box
				if it.Class < 0 || it.Class >= len(sf.Classes) || b[0] < 0 || b[1] < 0 || b[2] > fr.W || b[3] > fr.H || b[0] >= b[2] || b[1] >= b[3] {
					t.Fatalf("accepted item %+v in a %d×%d frame with %d classes", it, fr.W, fr.H, len(sf.Classes))
				}
			}
		}
	})
}
