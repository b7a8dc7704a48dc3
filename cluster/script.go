package cluster

import (
	"fmt"
	"strings"
)

// Script holds what the job scripts need.
type Script struct {
	StudyName string
	StudyFile string // absolute
	Archive   string // absolute
	Work      Layout // absolute directory
	Moltrail  string // the executable the jobs run (absolute)
	Shards    int
	Tasks     []int // the array's task ids (shard numbers)
	Res       Resources
	// RetryFailed passes --retry-failed to the shards.
	RetryFailed bool
	// Written is the time the scripts were written (UTC, for the header).
	Written string
}

// quote makes a word safe for bash (single quotes).
func quote(s string) string {
	if s != "" && strings.Trim(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789/._-+:,=@") == "" {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

func (s *Script) sbatchLines(b *strings.Builder, job, time, output string, array bool) {
	line := func(format string, a ...any) { fmt.Fprintf(b, "#SBATCH "+format+"\n", a...) }
	line("--job-name=%s", job)
	if array {
		if s.Res.MaxRunning > 0 {
			line("--array=%s%%%d", ArrayList(s.Tasks), s.Res.MaxRunning)
		} else {
			line("--array=%s", ArrayList(s.Tasks))
		}
	}
	if s.Res.Partition != "" {
		line("--partition=%s", s.Res.Partition)
	}
	if time != "" {
		line("--time=%s", time)
	}
	if array {
		line("--cpus-per-task=%d", s.Res.CPUs)
		if s.Res.Memory != "" {
			line("--mem=%s", s.Res.Memory)
		}
	} else {
		line("--cpus-per-task=1")
	}
	line("--output=%s", output)
	for _, e := range s.Res.Extra {
		line("%s", e)
	}
}

// Array is the text of the array job script.
func (s *Script) Array() string {
	var b strings.Builder
	fmt.Fprintf(&b, `#!/bin/bash
#
# moltrail study %q on Slurm: one array task per shard.
#
# Written by "moltrail cluster" on %s from
#   %s
# The study is split into %d shards (moltrail decides which items go to
# which shard from the study file alone; an optimisation and the single
# points on its geometry always share a shard). Array task K runs shard K:
# it computes that shard's items into its own archive under
#   %s
# and reuses whatever the study's archive already holds. Nothing is computed
# twice: a task that is run again computes only what its shard still lacks.
# The merge job (merge.sbatch, submitted to start after this array ends)
# merges the shard archives into the study's archive.
#
# Edit the #SBATCH lines for your site (account, QOS, constraints); keep the
# --array line: "moltrail cluster" writes the shards that need running.
# Each task's calculations use all of its --cpus-per-task; the thread count
# never changes a number.
#
`, s.StudyName, s.Written, s.StudyFile, s.Shards, s.Work.ShardsDir())
	s.sbatchLines(&b, jobName(s.StudyName, ""), s.Res.Time, s.Work.LogDir()+"/shard-%a-job-%A.out", true)
	retry := ""
	if s.RetryFailed {
		retry = " \\\n  --retry-failed"
	}
	fmt.Fprintf(&b, `
set -euo pipefail

moltrail=%s
study=%s
shards=%d
shard_root=%s
study_archive=%s

shard=${SLURM_ARRAY_TASK_ID:?this script runs as a task of a Slurm array job}
threads=${SLURM_CPUS_PER_TASK:-1}

echo "moltrail shard $shard of $shards on $(hostname), job ${SLURM_JOB_ID:-?}, $threads thread(s)"
# Exit status: 0 every item of the shard has a converged record, 1 some
# item failed or did not converge (the record is stored all the same).
exec "$moltrail" study "$study" \
  --shard "$shard/$shards" \
  --archive "$shard_root/shard-$shard-of-$shards" \
  --reuse-from "$study_archive" \
  --wait 10m \
  --threads "$threads"%s
`, quote(s.Moltrail), quote(s.StudyFile), s.Shards, quote(s.Work.ShardsDir()), quote(s.Archive), retry)
	return b.String()
}

// Merge is the text of the merge job script.
func (s *Script) Merge() string {
	var b strings.Builder
	fmt.Fprintf(&b, `#!/bin/bash
#
# moltrail study %q on Slurm: merge the shard archives into the study's
# archive.
#
# Written by "moltrail cluster" on %s. Submitted with
# --dependency=afterany:<array job id>, so it starts once every array task
# has ended, however it ended. The merge checks every record as an import
# does, never overwrites, and adds nothing that the study's archive holds
# already: running it again (or after a second array job) is safe, and a
# merge that was stopped is completed by running it again.
#
`, s.StudyName, s.Written)
	s.sbatchLines(&b, jobName(s.StudyName, "-merge"), s.Res.MergeTime, s.Work.LogDir()+"/merge-job-%j.out", false)
	fmt.Fprintf(&b, `
set -euo pipefail

moltrail=%s
shard_root=%s
study_archive=%s

exec "$moltrail" merge --archive "$study_archive" --wait 10m "$shard_root"
`, quote(s.Moltrail), quote(s.Work.ShardsDir()), quote(s.Archive))
	return b.String()
}
