package pipeline

import (
	"bufio"
	"encoding/json"
	"fmt"
	"io"
	"os"
)

// FileInfo describes a model file that Inspect has checked in full: the
// parts of its layout ("STRIATEM", uint32 version, uint32 header length,
// JSON header, zero padding, tensors, SHA-256) a person inspecting the file
// wants to see.
type FileInfo struct {
	Version  uint32          // format version of the file
	Size     int64           // bytes
	Header   json.RawMessage // the JSON header as stored (config, classes, tensor table)
	Config   json.RawMessage // the pipeline configuration inside the header
	Classes  []string
	Tensors  []TensorInfo
	Checksum [32]byte // the stored (and verified) SHA-256 of everything before it
}

// TensorInfo is one entry of a model file's tensor table; Offset is from
// the start of the tensor data, Length in bytes.
type TensorInfo struct {
	Name   string `json:"name"`
	DType  DType  `json:"dtype"`
	Shape  []int  `json:"shape"`
	Offset int64  `json:"offset"`
	Length int64  `json:"length"`
}

// Elems returns the number of elements, the product of the shape.
func (t TensorInfo) Elems() int64 { return product(t.Shape) }

// Inspect reads a model file from r, checks it exactly as Load does, and
// returns the model and a description of the file.
func Inspect(r io.Reader) (*Model, *FileInfo, error) { return inspect(r, -1, Limits{}) }

func inspect(r io.Reader, size int64, lim Limits) (*Model, *FileInfo, error) {
	info := new(FileInfo)
	m, err := load(r, size, lim, info)
	if err != nil {
		return nil, nil, err
	}
	return m, info, nil
}

// InspectFile is Inspect on the named file; errors name the file.
func InspectFile(path string) (*Model, *FileInfo, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, fmt.Errorf("pipeline: %w", err)
	}
	defer f.Close()
	m, info, err := inspect(bufio.NewReaderSize(f, 1<<16), fileSize(f), Limits{})
	if err != nil {
		return nil, nil, fmt.Errorf("%w (in %s)", err, path)
	}
	return m, info, nil
}
