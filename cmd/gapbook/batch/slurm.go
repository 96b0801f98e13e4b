package batch

import (
	"fmt"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
)

// SlurmOptions describe the job array that runs a study in shares on a
// Slurm cluster.
type SlurmOptions struct {
	// Gapbook is the command to run on the nodes (an absolute path).
	Gapbook string
	// Study is the study file (an absolute path, readable on the nodes).
	Study string
	// Shares is the number of array tasks, one share each.
	Shares int
	// Dir is where the parts, the logs and the merged study go.
	Dir string
	// Partition and Time are passed to sbatch when set.
	Partition, Time string
	// Workers per task (0: the cores Slurm gives the task).
	Workers int
}

var safeArg = regexp.MustCompile(`^[A-Za-z0-9_./:@%+=,-]+$`)

// quote makes s one word for the shell.
func quote(s string) string {
	if safeArg.MatchString(s) {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// SlurmScripts returns the batch script of the job array (task K runs
// share K of N) and of the merge job that runs after all of them
// succeeded. Nothing in the study depends on Slurm: the scripts only call
// gapbook run --members and gapbook merge.
func SlurmScripts(o SlurmOptions) (array, merge string, err error) {
	if o.Shares < 1 {
		return "", "", fmt.Errorf("slurm: want at least one share, got %d", o.Shares)
	}
	for _, p := range []string{o.Gapbook, o.Study, o.Dir} {
		if !filepath.IsAbs(p) {
			return "", "", fmt.Errorf("slurm: %q must be an absolute path, as the nodes see it", p)
		}
	}
	header := func(name string) string {
		var b strings.Builder
		b.WriteString("#!/bin/bash\n")
		fmt.Fprintf(&b, "#SBATCH --job-name=%s\n", name)
		if o.Partition != "" {
			fmt.Fprintf(&b, "#SBATCH --partition=%s\n", o.Partition)
		}
		if o.Time != "" {
			fmt.Fprintf(&b, "#SBATCH --time=%s\n", o.Time)
		}
		return b.String()
	}
	workers := ""
	if o.Workers > 0 {
		workers = " --workers " + strconv.Itoa(o.Workers)
	}
	parts := filepath.Join(o.Dir, "parts")
	array = header("gapbook-shares") +
		fmt.Sprintf("#SBATCH --array=1-%d\n", o.Shares) +
		fmt.Sprintf("#SBATCH --output=%s\n", filepath.Join(o.Dir, "logs", "share-%a.log")) +
		"set -euo pipefail\n" +
		fmt.Sprintf("mkdir -p %s\n", quote(parts)) +
		fmt.Sprintf("exec %s run %s --members \"$SLURM_ARRAY_TASK_ID/%d\"%s --out %s/part-\"$SLURM_ARRAY_TASK_ID\".json\n",
			quote(o.Gapbook), quote(o.Study), o.Shares, workers, quote(parts))
	merge = header("gapbook-merge") +
		fmt.Sprintf("#SBATCH --output=%s\n", filepath.Join(o.Dir, "logs", "merge.log")) +
		"set -euo pipefail\n" +
		fmt.Sprintf("exec %s merge %s %s/part-*.json --out %s\n",
			quote(o.Gapbook), quote(o.Study), quote(parts), quote(filepath.Join(o.Dir, "merged.gapbook")))
	return array, merge, nil
}
