//go:build ignore

// gen_simd writes the generated SIMD loops of package v1layer
// (conv_gen_amd64.go, elementwise_gen_amd64.go) from the template and the
// list of variants in internal/simdgen. Run it with go generate ./v1layer;
// it needs no GOEXPERIMENT.
package main

import (
	"log"
	"os"

	"github.com/striate/striate/v1layer/internal/simdgen"
)

func main() {
	files, err := simdgen.Files()
	if err != nil {
		log.Fatal(err)
	}
	for name, src := range files {
		if err := os.WriteFile(name, src, 0o644); err != nil {
			log.Fatal(err)
		}
	}
}
