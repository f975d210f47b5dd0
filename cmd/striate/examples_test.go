package main

import (
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// TestJobArrayExamples: the job-array examples the README points to stay in
// step with the command: every flag they pass is one the command declares
// (its -h lists it), the Kubernetes manifest's --shard auto/N equals its
// completions, and the Slurm script runs --shard auto in an array.
func TestJobArrayExamples(t *testing.T) {
	cliFixture(t)
	dir := filepath.Join("..", "..", "examples", "jobarrays")
	read := func(name string) string {
		b, err := os.ReadFile(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		return string(b)
	}
	yaml, sbatch := read("extract-indexed-job.yaml"), read("evaluate-array.sbatch")
	completions := regexp.MustCompile(`(?m)^\s+completions: (\d+)$`).FindStringSubmatch(yaml)
	auto := regexp.MustCompile(`"auto/(\d+)"`).FindStringSubmatch(yaml)
	if completions == nil || auto == nil || completions[1] != auto[1] || !strings.Contains(yaml, "completionMode: Indexed") {
		t.Errorf("manifest: completions %v, --shard %v; want an indexed Job whose auto/N is its completions", completions, auto)
	}
	if !regexp.MustCompile(`(?m)^#SBATCH --array=\d+-\d+$`).MatchString(sbatch) || !strings.Contains(sbatch, "--shard auto ") {
		t.Error("the Slurm script should run --shard auto in an --array range")
	}
	flag := regexp.MustCompile(`--[a-z]+`)
	for cmd, text := range map[string]string{
		"extract":  yaml[strings.Index(yaml, `args: ["extract"`):],
		"evaluate": sbatch[strings.Index(sbatch, "./striate evaluate --model"):],
	} {
		help := runCLI(t, cmd, "-h")
		for _, f := range flag.FindAllString(strings.SplitN(text, "\n\n", 2)[0], -1) {
			if !strings.Contains(help.stdout+help.stderr, "-"+f[2:]+" ") && !strings.Contains(help.stdout+help.stderr, "-"+f[2:]+"\n") {
				t.Errorf("%s example passes %s, which striate %s -h does not list", cmd, f, cmd)
			}
		}
	}
}
