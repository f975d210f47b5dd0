package datasets

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"image"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
)

// SceneIndex is the name of the JSON file that lists a scene folder's
// frames, boxes and classes.
//
// A scene folder is a directory holding the frames as image files and one
// index, scenes.json:
//
//	DIR/scenes.json
//	DIR/frame-000000.png …   (any relative path inside DIR; WriteSceneFolder uses these names)
//
//	{
//	  "layout": "striate scene folder",
//	  "version": 1,
//	  "classes": ["tshirt", "trouser", …],
//	  "frames": [
//	    {"file": "frame-000000.png", "width": 128, "height": 128,
//	     "items": [{"class": "trouser", "box": [12, 40, 37, 71]}]}
//	  ]
//	}
//
// Boxes are [x0, y0, x1, y1) in pixels of the frame (SceneItem's
// convention: half-open, 0 ≤ x0 < x1 ≤ width, 0 ≤ y0 < y1 ≤ height); classes
// are named, and each name must be one of "classes". A frame with no items
// has "items": [] and is an empty frame, not a frame without ground truth.
// The index is decoded strictly: unknown fields, a second JSON value and
// wrong types are errors. Frames are read as grey (BT.601 luma, as ToGray)
// in any format LoadFolder reads.
const SceneIndex = "scenes.json"

// sceneLayout and sceneVersion identify the index format.
const (
	sceneLayout  = "striate scene folder"
	sceneVersion = 1
)

// MaxSceneIndexBytes bounds the size of scenes.json (64 MiB: about a million
// boxes), checked before it is read.
const MaxSceneIndexBytes = 64 << 20

// sceneIndexJSON is the index's JSON form (see SceneIndex).
type sceneIndexJSON struct {
	Layout  string           `json:"layout"`
	Version int              `json:"version"`
	Classes []string         `json:"classes"`
	Frames  []sceneFrameJSON `json:"frames"`
}

type sceneFrameJSON struct {
	File   string          `json:"file"`
	Width  int             `json:"width"`
	Height int             `json:"height"`
	Items  []sceneItemJSON `json:"items"`
}

type sceneItemJSON struct {
	Class string `json:"class"`
	Box   [4]int `json:"box"`
}

// The kinds of SceneFolderError, for errors.Is.
var (
	ErrSceneIndexMissing   = errors.New("no " + SceneIndex)
	ErrSceneIndexMalformed = errors.New("malformed " + SceneIndex)
	ErrSceneFrameMissing   = errors.New("frame file missing")
	ErrSceneFrameBad       = errors.New("frame file unusable")
	ErrSceneBoxOutside     = errors.New("box outside its frame")
	ErrSceneUnknownClass   = errors.New("unknown class")
)

// SceneFolderError reports a fault in a scene folder: its Kind (one of the
// ErrScene… values), the File at fault, the JSON Field (such as
// "frames[3].items[1].box") when there is one, what was found and the fix.
type SceneFolderError struct {
	Kind   error
	File   string
	Field  string
	Detail string
	Fix    string
}

func (e *SceneFolderError) Error() string {
	var b strings.Builder
	b.WriteString("datasets: ")
	b.WriteString(e.File)
	b.WriteString(": ")
	b.WriteString(e.Kind.Error())
	if e.Field != "" {
		b.WriteString(" at ")
		b.WriteString(e.Field)
	}
	if e.Detail != "" {
		b.WriteString(": ")
		b.WriteString(e.Detail)
	}
	if e.Fix != "" {
		b.WriteString("; ")
		b.WriteString(e.Fix)
	}
	return b.String()
}

func (e *SceneFolderError) Unwrap() error { return e.Kind }

// SceneFolder is the index of a scene folder as read by ReadSceneFolder:
// every frame's file, size and ground truth. Frames are decoded only by
// Frame. It is plain data.
type SceneFolder struct {
	Dir     string
	Classes []string
	Frames  []SceneFrame
}

// SceneFrame is one frame of a SceneFolder: its file (relative to the
// folder), its size and its items (Source −1).
type SceneFrame struct {
	File  string
	W, H  int
	Items []SceneItem
}

// ReadSceneFolder reads and checks the index of the scene folder dir: the
// JSON decodes strictly, every frame file exists, is an image of the stated
// size (its header is read, not the pixels), every box lies inside its frame
// and every class is listed. Faults are *SceneFolderError values naming the
// file and the fix.
func ReadSceneFolder(dir string) (*SceneFolder, error) {
	path := filepath.Join(dir, SceneIndex)
	f, err := os.Open(path)
	if errors.Is(err, os.ErrNotExist) {
		return nil, &SceneFolderError{Kind: ErrSceneIndexMissing, File: path,
			Fix: "a scene folder needs its index " + SceneIndex + " beside the frames (see datasets.WriteSceneFolder for the layout); check the folder name"}
	}
	if err != nil {
		return nil, &SceneFolderError{Kind: ErrSceneIndexMissing, File: path, Detail: err.Error(), Fix: "make the file readable"}
	}
	defer f.Close()
	raw, err := io.ReadAll(io.LimitReader(f, MaxSceneIndexBytes+1))
	if err != nil {
		return nil, &SceneFolderError{Kind: ErrSceneIndexMalformed, File: path, Detail: err.Error(), Fix: "make the file readable"}
	}
	if len(raw) > MaxSceneIndexBytes {
		return nil, &SceneFolderError{Kind: ErrSceneIndexMalformed, File: path,
			Detail: fmt.Sprintf("larger than MaxSceneIndexBytes (%d)", MaxSceneIndexBytes), Fix: "split the frames over several folders"}
	}
	idx, err := decodeSceneIndex(path, raw)
	if err != nil {
		return nil, err
	}
	out := &SceneFolder{Dir: dir, Classes: idx.Classes, Frames: make([]SceneFrame, len(idx.Frames))}
	class := make(map[string]int, len(idx.Classes))
	for i, c := range idx.Classes {
		if _, dup := class[c]; dup || c == "" {
			return nil, &SceneFolderError{Kind: ErrSceneIndexMalformed, File: path, Field: fmt.Sprintf("classes[%d]", i),
				Detail: fmt.Sprintf("class name %q is empty or repeated", c), Fix: "list each class once, by a non-empty name"}
		}
		class[c] = i
	}
	for i, fr := range idx.Frames {
		field := fmt.Sprintf("frames[%d]", i)
		sf, err := checkFrame(dir, path, field, fr, class)
		if err != nil {
			return nil, err
		}
		out.Frames[i] = sf
	}
	return out, nil
}

// decodeSceneIndex decodes the index strictly and checks its header.
func decodeSceneIndex(path string, raw []byte) (*sceneIndexJSON, error) {
	bad := func(field, detail, fix string) error {
		return &SceneFolderError{Kind: ErrSceneIndexMalformed, File: path, Field: field, Detail: detail, Fix: fix}
	}
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.DisallowUnknownFields()
	var idx sceneIndexJSON
	if err := dec.Decode(&idx); err != nil {
		var syn *json.SyntaxError
		var typ *json.UnmarshalTypeError
		switch {
		case errors.As(err, &syn):
			line, col := lineCol(raw, syn.Offset)
			return nil, bad("", fmt.Sprintf("%v at line %d, column %d", syn, line, col), "fix the JSON syntax there")
		case errors.As(err, &typ):
			return nil, bad(typ.Field, fmt.Sprintf("a JSON %s where a %v belongs", typ.Value, typ.Type), "give the field the type the layout shows")
		case errors.Is(err, io.EOF), errors.Is(err, io.ErrUnexpectedEOF):
			return nil, bad("", "empty or cut short", "write the whole index (see datasets.WriteSceneFolder for the layout)")
		}
		return nil, bad("", err.Error(), "use only the fields of the layout (layout, version, classes, frames; file, width, height, items; class, box)")
	}
	if _, err := dec.Token(); err != io.EOF {
		return nil, bad("", "more than one JSON value", "keep exactly one object in the file")
	}
	if idx.Layout != sceneLayout {
		return nil, bad("layout", fmt.Sprintf("%q", idx.Layout), fmt.Sprintf("set \"layout\": %q", sceneLayout))
	}
	if idx.Version != sceneVersion {
		return nil, bad("version", fmt.Sprintf("version %d is not known", idx.Version), fmt.Sprintf("this build reads version %d; write the folder again", sceneVersion))
	}
	if len(idx.Classes) == 0 {
		return nil, bad("classes", "no classes listed", "list the class names, in the order of the recognizer's classes")
	}
	return &idx, nil
}

// checkFrame checks one frame entry against its file and the classes.
func checkFrame(dir, index, field string, fr sceneFrameJSON, class map[string]int) (SceneFrame, error) {
	if fr.File == "" || !filepath.IsLocal(filepath.FromSlash(fr.File)) {
		return SceneFrame{}, &SceneFolderError{Kind: ErrSceneIndexMalformed, File: index, Field: field + ".file",
			Detail: fmt.Sprintf("%q is not a relative path inside the folder", fr.File), Fix: "name frame files relative to the folder, without \"..\""}
	}
	if fr.Width <= 0 || fr.Height <= 0 || int64(fr.Width)*int64(fr.Height) > MaxFolderPixels {
		return SceneFrame{}, &SceneFolderError{Kind: ErrSceneIndexMalformed, File: index, Field: field,
			Detail: fmt.Sprintf("size %d×%d is empty or above MaxFolderPixels (%d)", fr.Width, fr.Height, MaxFolderPixels), Fix: "give each frame's width and height in pixels"}
	}
	p := filepath.Join(dir, filepath.FromSlash(fr.File))
	w, h, err := frameHeader(p)
	if errors.Is(err, os.ErrNotExist) {
		return SceneFrame{}, &SceneFolderError{Kind: ErrSceneFrameMissing, File: p, Field: field + ".file",
			Detail: "listed in " + SceneIndex + " but not in the folder", Fix: "restore the file or remove its entry from " + SceneIndex}
	}
	if err != nil {
		return SceneFrame{}, &SceneFolderError{Kind: ErrSceneFrameBad, File: p, Detail: err.Error(), Fix: "replace it with a PNG, JPEG, GIF, BMP, TIFF or WebP image"}
	}
	if w != fr.Width || h != fr.Height {
		return SceneFrame{}, &SceneFolderError{Kind: ErrSceneFrameBad, File: p, Field: field,
			Detail: fmt.Sprintf("the image is %d×%d but %s says %d×%d", w, h, SceneIndex, fr.Width, fr.Height), Fix: "correct width and height in " + SceneIndex}
	}
	sf := SceneFrame{File: fr.File, W: w, H: h, Items: make([]SceneItem, len(fr.Items))}
	for j, it := range fr.Items {
		f := fmt.Sprintf("%s.items[%d]", field, j)
		c, ok := class[it.Class]
		if !ok {
			return SceneFrame{}, &SceneFolderError{Kind: ErrSceneUnknownClass, File: index, Field: f + ".class",
				Detail: fmt.Sprintf("%q is not in \"classes\"", it.Class), Fix: "add it to \"classes\" or correct the name"}
		}
		b := it.Box
		if !(0 <= b[0] && b[0] < b[2] && b[2] <= w && 0 <= b[1] && b[1] < b[3] && b[3] <= h) {
			return SceneFrame{}, &SceneFolderError{Kind: ErrSceneBoxOutside, File: index, Field: f + ".box",
				Detail: fmt.Sprintf("%v does not lie inside the %d×%d frame", b, w, h),
				Fix:    fmt.Sprintf("boxes are [x0, y0, x1, y1) with 0 ≤ x0 < x1 ≤ %d and 0 ≤ y0 < y1 ≤ %d", w, h)}
		}
		sf.Items[j] = SceneItem{Box: b, Class: c, Source: -1}
	}
	return sf, nil
}

// frameHeader returns the size an image file declares.
func frameHeader(p string) (w, h int, err error) {
	f, err := os.Open(p)
	if err != nil {
		return 0, 0, err
	}
	defer f.Close()
	cfg, _, err := image.DecodeConfig(f)
	if err != nil {
		return 0, 0, errors.New(decodeErr(p, err).(*ImageError).Reason())
	}
	return cfg.Width, cfg.Height, nil
}

// lineCol converts a byte offset into a 1-based line and column.
func lineCol(raw []byte, off int64) (line, col int) {
	off = min(max(off, 0), int64(len(raw)))
	before := raw[:off]
	line = bytes.Count(before, []byte("\n")) + 1
	col = int(off) - (bytes.LastIndexByte(before, '\n') + 1)
	return line, col
}

// Frame decodes frame i of the folder as grey levels in [0,1] (BT.601 luma)
// into dst (reusing its buffers) and returns it with its items. Faults of
// the file are *SceneFolderError values. It panics if i is out of range.
func (f *SceneFolder) Frame(dst *Scene, i int) (*Scene, error) {
	fr := f.Frames[i]
	p := filepath.Join(f.Dir, filepath.FromSlash(fr.File))
	img, reason := decodeFile(p)
	if img == nil {
		kind := ErrSceneFrameBad
		if _, err := os.Stat(p); errors.Is(err, os.ErrNotExist) {
			kind = ErrSceneFrameMissing
		}
		return nil, &SceneFolderError{Kind: kind, File: p, Detail: reason, Fix: "replace it with the frame " + SceneIndex + " lists"}
	}
	if b := img.Bounds(); b.Dx() != fr.W || b.Dy() != fr.H {
		return nil, &SceneFolderError{Kind: ErrSceneFrameBad, File: p,
			Detail: fmt.Sprintf("the image is %d×%d but %s says %d×%d", b.Dx(), b.Dy(), SceneIndex, fr.W, fr.H), Fix: "correct width and height in " + SceneIndex}
	}
	if dst == nil {
		dst = new(Scene)
	}
	dst.W, dst.H = fr.W, fr.H
	dst.Pix = ToGray(dst.Pix, img, 0, 0)
	dst.Items = append(dst.Items[:0], fr.Items...)
	return dst, nil
}

// FrameName is the file name WriteSceneFolder gives frame i.
func FrameName(i int) string { return fmt.Sprintf("frame-%06d.png", i) }

// WriteSceneFolder writes scenes as a scene folder in dir (created if
// needed): each frame as an 8-bit grey PNG named FrameName(i), holding
// round(255·v) of its pixels clipped to [0,1], and the index scenes.json
// with the class names classes. It refuses a dir that already holds an
// index, so that no earlier folder is overwritten, and checks every box and
// class before writing anything. The index is written last, under a
// temporary name renamed into place, so a folder with an index is complete.
func WriteSceneFolder(dir string, classes []string, scenes []Scene) error {
	idx := sceneIndexJSON{Layout: sceneLayout, Version: sceneVersion, Classes: classes, Frames: make([]sceneFrameJSON, len(scenes))}
	if len(classes) == 0 {
		return fmt.Errorf("datasets: WriteSceneFolder needs the class names; pass the Set's Classes")
	}
	for i := range scenes {
		s := &scenes[i]
		if s.W <= 0 || s.H <= 0 || len(s.Pix) != s.W*s.H {
			return fmt.Errorf("datasets: WriteSceneFolder scene %d is %d×%d with %d pixels; build it with SceneBuilder or Clutter", i, s.W, s.H, len(s.Pix))
		}
		fr := sceneFrameJSON{File: FrameName(i), Width: s.W, Height: s.H, Items: make([]sceneItemJSON, len(s.Items))}
		for j, it := range s.Items {
			b := it.Box
			if it.Class < 0 || it.Class >= len(classes) {
				return fmt.Errorf("datasets: WriteSceneFolder scene %d item %d has class %d outside [0,%d); pass the classes of the scenes' Set", i, j, it.Class, len(classes))
			}
			if !(0 <= b[0] && b[0] < b[2] && b[2] <= s.W && 0 <= b[1] && b[1] < b[3] && b[3] <= s.H) {
				return fmt.Errorf("datasets: WriteSceneFolder scene %d item %d box %v is not inside its %d×%d frame", i, j, b, s.W, s.H)
			}
			fr.Items[j] = sceneItemJSON{Class: classes[it.Class], Box: b}
		}
		idx.Frames[i] = fr
	}
	path := filepath.Join(dir, SceneIndex)
	if _, err := os.Stat(path); err == nil {
		return fmt.Errorf("datasets: %s already exists; write the scenes to a new folder or remove the old one first", path)
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("datasets: scene folder: %w", err)
	}
	for i := range scenes {
		if err := writeGrayPNG(filepath.Join(dir, FrameName(i)), &scenes[i]); err != nil {
			return err
		}
	}
	raw, err := marshalSceneIndex(&idx)
	if err != nil {
		return fmt.Errorf("datasets: scene folder index: %w", err)
	}
	tmp := path + ".tmp"
	if err := os.WriteFile(tmp, raw, 0o644); err != nil {
		return fmt.Errorf("datasets: scene folder index: %w", err)
	}
	if err := os.Rename(tmp, path); err != nil {
		return fmt.Errorf("datasets: scene folder index: %w", err)
	}
	return nil
}

// marshalSceneIndex writes the index with one frame per line, so that the
// file stays readable and diffs well.
func marshalSceneIndex(idx *sceneIndexJSON) ([]byte, error) {
	var b bytes.Buffer
	layout, _ := json.Marshal(idx.Layout)
	classes, err := json.Marshal(idx.Classes)
	if err != nil {
		return nil, err
	}
	fmt.Fprintf(&b, "{\n \"layout\": %s,\n \"version\": %d,\n \"classes\": %s,\n \"frames\": [", layout, idx.Version, classes)
	for i, fr := range idx.Frames {
		line, err := json.Marshal(fr)
		if err != nil {
			return nil, err
		}
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteString("\n  ")
		b.Write(line)
	}
	b.WriteString("\n ]\n}\n")
	return b.Bytes(), nil
}

// writeGrayPNG writes a scene's pixels as an 8-bit grey PNG.
func writeGrayPNG(p string, s *Scene) error {
	g := image.NewGray(image.Rect(0, 0, s.W, s.H))
	for i, v := range s.Pix {
		if v != v { // NaN
			v = 0
		}
		g.Pix[i] = uint8(math.Round(255 * math.Min(1, math.Max(0, float64(v)))))
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, g); err != nil {
		return fmt.Errorf("datasets: %s: %w", p, err)
	}
	if err := os.WriteFile(p, buf.Bytes(), 0o644); err != nil {
		return fmt.Errorf("datasets: %w", err)
	}
	return nil
}
