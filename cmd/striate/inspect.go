package main

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"strings"
	"text/tabwriter"

	"github.com/striate/striate/pipeline"
)

func init() {
	register(&command{
		name:    "inspect",
		summary: "show a model file's header, configuration and tensor table",
		usage:   "MODEL.stm",
		example: `  striate inspect fashion.stm
  striate inspect --json fashion.stm | jq .tensors`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			asJSON := fs.Bool("json", false, "print the file's JSON header (config, classes, tensors) instead of tables")
			return func(args []string) error {
				if len(args) != 1 {
					return usagef("inspect takes one model file, got %d arguments", len(args))
				}
				return runInspect(g, args[0], *asJSON)
			}
		},
	})
}

// modelHeader mirrors the JSON header of a model file (pipeline's file
// layout: "STRIATEM", uint32 version, uint32 header length, JSON header,
// padding, tensors, SHA-256). inspect reads it only after pipeline.LoadFile
// has checked the whole file.
type modelHeader struct {
	Format  string          `json:"format"`
	Config  json.RawMessage `json:"config"`
	Classes []string        `json:"classes"`
	Tensors []struct {
		Name   string `json:"name"`
		DType  string `json:"dtype"`
		Shape  []int  `json:"shape"`
		Offset int64  `json:"offset"`
		Length int64  `json:"length"`
	} `json:"tensors"`
}

func runInspect(g *globals, path string, asJSON bool) error {
	m, err := pipeline.LoadFile(path)
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		return err
	}
	// LoadFile has validated magic, version, lengths and checksum.
	version := binary.LittleEndian.Uint32(b[8:12])
	hl := int(binary.LittleEndian.Uint32(b[12:16]))
	var h modelHeader
	if err := json.Unmarshal(b[16:16+hl], &h); err != nil {
		return fmt.Errorf("%s: header: %w", path, err)
	}
	if asJSON {
		var buf bytes.Buffer
		if err := json.Indent(&buf, b[16:16+hl], "", "  "); err != nil {
			return err
		}
		fmt.Fprintln(g.stdout, buf.String())
		return nil
	}
	w := g.stdout
	ih, iw := m.InputSize()
	fmt.Fprintf(w, "file          %s\n", path)
	fmt.Fprintf(w, "size          %d bytes\n", len(b))
	fmt.Fprintf(w, "format        %s, version %d (this build writes %d)\n", h.Format, version, pipeline.FormatVersion)
	fmt.Fprintf(w, "header        %d bytes of JSON\n", hl)
	fmt.Fprintf(w, "checksum      SHA-256 %x… verified\n", b[len(b)-32:len(b)-24])
	fmt.Fprintf(w, "input         %d×%d grey\n", ih, iw)
	fmt.Fprintf(w, "channels      %d front-end maps\n", len(m.Channels()))
	fmt.Fprintf(w, "features      %d per image\n", m.FeatureLen())
	fmt.Fprintf(w, "classes       %d: %s\n", m.NumClasses(), strings.Join(m.Classes(), ", "))
	var cfg bytes.Buffer
	if err := json.Indent(&cfg, h.Config, "  ", "  "); err == nil {
		fmt.Fprintf(w, "\nconfiguration\n  %s\n", cfg.String())
	}
	fmt.Fprintln(w, "\ntensors")
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "  name\tdtype\tshape\telements\tbytes\toffset")
	var total int64
	for _, t := range h.Tensors {
		n := int64(1)
		dims := make([]string, len(t.Shape))
		for i, d := range t.Shape {
			n *= int64(d)
			dims[i] = fmt.Sprint(d)
		}
		fmt.Fprintf(tw, "  %s\t%s\t%s\t%d\t%d\t%d\n", t.Name, t.DType, strings.Join(dims, "×"), n, t.Length, t.Offset)
		total += t.Length
	}
	tw.Flush()
	fmt.Fprintf(w, "  %d tensors, %d bytes of data\n", len(h.Tensors), total)
	return nil
}
