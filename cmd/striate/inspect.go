package main

import (
	"bytes"
	"encoding/json"
	"flag"
	"fmt"

	"github.com/striate/striate/eval"
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
	return eval.WriteModelInfo(g.stdout, path, m, info)
}
