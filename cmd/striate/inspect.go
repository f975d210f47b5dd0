package main

import (
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"strings"
	"text/tabwriter"

	"github.com/striate/striate/pipeline"
)

func init() {
	register(&command{
		name:    "inspect",
		summary: "show a model file's header, configuration and tensor table",
		usage:   "MODEL.striate",
		example: `  striate inspect fashion.striate
  striate inspect --json fashion.striate | jq .tensors`,
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

func runInspect(g *globals, path string, asJSON bool) error {
	m, info, err := pipeline.InspectFile(path)
	if err != nil {
		return err
	}
	if asJSON {
		var buf bytes.Buffer
		if err := json.Indent(&buf, info.Header, "", "  "); err != nil {
			return err
		}
		fmt.Fprintln(g.stdout, buf.String())
		return nil
	}
	w := g.stdout
	ih, iw := m.InputSize()
	fmt.Fprintf(w, "file          %s\n", path)
	fmt.Fprintf(w, "size          %d bytes\n", info.Size)
	fmt.Fprintf(w, "format        striate-model, version %d (this build writes %d, and %d for int8 models)\n", info.Version, pipeline.FormatVersion, pipeline.FormatVersionInt8)
	fmt.Fprintf(w, "header        %d bytes of JSON\n", len(info.Header))
	fmt.Fprintf(w, "checksum      SHA-256 %x… verified\n", info.Checksum[:8])
	fmt.Fprintf(w, "input         %d×%d grey\n", ih, iw)
	fmt.Fprintf(w, "channels      %d front-end maps\n", len(m.Channels()))
	fmt.Fprintf(w, "features      %d per image\n", m.FeatureLen())
	fmt.Fprintf(w, "classes       %d: %s\n", m.NumClasses(), strings.Join(m.Classes(), ", "))
	var cfg bytes.Buffer
	if err := json.Indent(&cfg, info.Config, "  ", "  "); err == nil {
		fmt.Fprintf(w, "\nconfiguration\n  %s\n", cfg.String())
	}
	fmt.Fprintln(w, "\ntensors")
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "  name\tdtype\tshape\telements\tbytes\toffset")
	var total int64
	for _, t := range info.Tensors {
		dims := make([]string, len(t.Shape))
		for i, d := range t.Shape {
			dims[i] = fmt.Sprint(d)
		}
		fmt.Fprintf(tw, "  %s\t%s\t%s\t%d\t%d\t%d\n", t.Name, t.DType, strings.Join(dims, "×"), t.Elems(), t.Length, t.Offset)
		total += t.Length
	}
	tw.Flush()
	fmt.Fprintf(w, "  %d tensors, %d bytes of data\n", len(info.Tensors), total)
	return nil
}
