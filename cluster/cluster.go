// Package cluster runs a study on a Slurm cluster: an array job of one
// task per shard of the study (each task a `moltrail study --shard K/N`
// into its own archive), and a merge job that starts when the array has
// ended, however it ended (afterany), and merges the shard archives into
// the study's archive.
//
// Everything about one study's cluster runs lives in its work directory:
//
//	array.sbatch            the array job script (plain bash, documented, editable)
//	merge.sbatch            the merge job script
//	shards/shard-K-of-N/    the archive each array task writes
//	logs/                   the jobs' output files
//	cluster.json            what was submitted when, with the job ids
//
// Preparing again after some tasks failed or ran out of time submits only
// the shards whose items are still missing (stored nowhere: neither in the
// study's archive nor in any shard archive), and none that is still queued
// or running. Status reports per shard what is done, failed and still to
// do, from the archives, and the queue states Slurm reports (squeue, and
// sacct where the site keeps accounting).
package cluster

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"

	"moltrail/archive/study"
)

// StateFormat names the layout of cluster.json.
const StateFormat = "moltrail-cluster/1"

// Layout names the files of a study's work directory.
type Layout struct{ Dir string }

// DefaultDir is the work directory of a study file: beside it, named
// after it ("benchmark.json" → "benchmark.cluster").
func DefaultDir(studyFile string) string {
	base := strings.TrimSuffix(filepath.Base(studyFile), filepath.Ext(studyFile))
	return filepath.Join(filepath.Dir(studyFile), base+".cluster")
}

func (l Layout) ArrayScript() string { return filepath.Join(l.Dir, "array.sbatch") }
func (l Layout) MergeScript() string { return filepath.Join(l.Dir, "merge.sbatch") }
func (l Layout) ShardsDir() string   { return filepath.Join(l.Dir, "shards") }
func (l Layout) LogDir() string      { return filepath.Join(l.Dir, "logs") }
func (l Layout) StateFile() string   { return filepath.Join(l.Dir, "cluster.json") }

// ShardDir is the archive of shard k of n.
func (l Layout) ShardDir(k, n int) string {
	return filepath.Join(l.ShardsDir(), fmt.Sprintf("shard-%d-of-%d", k, n))
}

// ShardArchives lists the shard archives present in the work directory
// (of any shard count), in name order.
func (l Layout) ShardArchives() []string {
	ents, err := os.ReadDir(l.ShardsDir())
	if err != nil {
		return nil
	}
	var out []string
	for _, e := range ents {
		d := filepath.Join(l.ShardsDir(), e.Name())
		if _, err := os.Stat(filepath.Join(d, "MANIFEST")); e.IsDir() && err == nil {
			out = append(out, d)
		}
	}
	return out
}

// Submission is one submission of a study's jobs.
type Submission struct {
	TimeUTC string `json:"time_utc"`
	Shards  int    `json:"shards"`
	// Tasks are the shards the array job runs (its array task ids).
	Tasks      []int  `json:"array_tasks"`
	ArrayJobID string `json:"array_job_id,omitempty"`
	MergeJobID string `json:"merge_job_id,omitempty"`
}

// State is cluster.json: the study and archive the work directory serves
// and every submission made from it.
type State struct {
	Format      string       `json:"format"`
	Study       string       `json:"study_file"`
	StudySHA256 string       `json:"study_file_sha256"`
	Archive     string       `json:"archive"`
	Shards      int          `json:"shards"`
	Submissions []Submission `json:"submissions"`
}

// LoadState reads cluster.json; a missing file gives (nil, nil).
func LoadState(l Layout) (*State, error) {
	b, err := os.ReadFile(l.StateFile())
	if errors.Is(err, os.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %v", l.StateFile(), err)
	}
	var s State
	if err := json.Unmarshal(b, &s); err != nil {
		return nil, fmt.Errorf("%s is not a moltrail cluster state file: %v", l.StateFile(), err)
	}
	if s.Format != StateFormat {
		return nil, fmt.Errorf("%s has format %q; this build reads %q", l.StateFile(), s.Format, StateFormat)
	}
	return &s, nil
}

// save writes cluster.json in place atomically.
func (s *State) save(l Layout) error {
	b, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return err
	}
	return writeAtomic(l.StateFile(), append(b, '\n'), 0o644)
}

func writeAtomic(path string, b []byte, mode os.FileMode) error {
	f, err := os.CreateTemp(filepath.Dir(path), ".moltrail-*")
	if err != nil {
		return fmt.Errorf("cannot write in %s: %v", filepath.Dir(path), unwrapPath(err))
	}
	_, err = f.Write(b)
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(f.Name(), mode)
	}
	if err == nil {
		err = os.Rename(f.Name(), path)
	}
	if err != nil {
		os.Remove(f.Name())
		return fmt.Errorf("%s: %v", path, unwrapPath(err))
	}
	return nil
}

func unwrapPath(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

func fileSHA256(path string) (string, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return "", err
	}
	h := sha256.Sum256(b)
	return hex.EncodeToString(h[:]), nil
}

// Resources are the Slurm settings of the jobs.
type Resources struct {
	// Partition (empty: the cluster's default).
	Partition string
	// Time is each array task's time limit in Slurm's notation
	// (minutes, MM:SS, HH:MM:SS, D-HH, D-HH:MM, D-HH:MM:SS); empty: the
	// partition's default.
	Time string
	// MergeTime is the merge job's time limit (empty: the partition's default).
	MergeTime string
	// CPUs per array task; each task's calculations use them all.
	CPUs int
	// Memory per array task, e.g. 4G (empty: the partition's default).
	Memory string
	// MaxRunning limits how many array tasks run at once (0: no limit).
	MaxRunning int
	// Extra are further #SBATCH lines for both jobs (account, QOS, …).
	Extra []string
}

var (
	reTime      = regexp.MustCompile(`^([0-9]+-)?[0-9]+(:[0-9]+){0,2}$`)
	reMemory    = regexp.MustCompile(`^[0-9]+[KMGT]?$`)
	rePartition = regexp.MustCompile(`^[A-Za-z0-9_.,-]+$`)
	reExtra     = regexp.MustCompile(`^--?[A-Za-z][A-Za-z0-9-]*(=.*|\s+.*)?$`)
)

// managed are the sbatch options moltrail writes itself.
var managed = []string{"array", "dependency", "output", "error", "job-name", "cpus-per-task", "time", "mem", "partition"}

// Check validates the settings; errors name the flag at fault.
func (r *Resources) Check() error {
	if r.Partition != "" && !rePartition.MatchString(r.Partition) {
		return fmt.Errorf("--partition %q is not a partition name (letters, digits, _ . , -)", r.Partition)
	}
	for _, t := range []struct{ flag, v string }{{"--time", r.Time}, {"--merge-time", r.MergeTime}} {
		if t.v != "" && !reTime.MatchString(t.v) {
			return fmt.Errorf("%s %q is not a Slurm time limit (minutes, HH:MM:SS or D-HH:MM:SS)", t.flag, t.v)
		}
	}
	if r.CPUs < 1 || r.CPUs > 4096 {
		return fmt.Errorf("--cpus-per-task %d is outside 1–4096", r.CPUs)
	}
	if r.Memory != "" && !reMemory.MatchString(r.Memory) {
		return fmt.Errorf("--mem %q is not a Slurm memory size (a number with K, M, G or T)", r.Memory)
	}
	if r.MaxRunning < 0 {
		return fmt.Errorf("--max-running %d is negative", r.MaxRunning)
	}
	for i, line := range r.Extra {
		opt, err := extraOption(line)
		if err != nil {
			return fmt.Errorf("--sbatch-line %q: %v", line, err)
		}
		r.Extra[i] = opt
	}
	return nil
}

// extraOption turns an extra line ("--account=chem" or "#SBATCH
// --account=chem") into the option text after "#SBATCH ".
func extraOption(line string) (string, error) {
	if strings.ContainsAny(line, "\r\n") {
		return "", errors.New("it holds a line break; give one option per --sbatch-line")
	}
	opt := strings.TrimSpace(line)
	opt = strings.TrimSpace(strings.TrimPrefix(opt, "#SBATCH"))
	if !reExtra.MatchString(opt) {
		return "", errors.New("it is not an sbatch option such as --account=NAME or --qos=NAME")
	}
	name := strings.TrimLeft(opt, "-")
	if i := strings.IndexAny(name, "= \t"); i >= 0 {
		name = name[:i]
	}
	for _, m := range managed {
		if name == m {
			return "", fmt.Errorf("--%s is written by moltrail itself (see the flags of moltrail cluster)", m)
		}
	}
	return opt, nil
}

// ArrayList writes shard numbers as Slurm's array list: "1-3,5,7-9".
func ArrayList(ks []int) string {
	var parts []string
	for i := 0; i < len(ks); {
		j := i
		for j+1 < len(ks) && ks[j+1] == ks[j]+1 {
			j++
		}
		if j > i {
			parts = append(parts, strconv.Itoa(ks[i])+"-"+strconv.Itoa(ks[j]))
		} else {
			parts = append(parts, strconv.Itoa(ks[i]))
		}
		i = j + 1
	}
	return strings.Join(parts, ",")
}

// jobName is a Slurm job name made from the study name.
func jobName(studyName, suffix string) string {
	var b strings.Builder
	for _, r := range studyName {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', r == '-', r == '_', r == '.':
			b.WriteRune(r)
		default:
			b.WriteByte('-')
		}
	}
	n := strings.Trim(b.String(), "-")
	if len(n) > 40 {
		n = n[:40]
	}
	if n == "" {
		n = "study"
	}
	return "moltrail-" + n + suffix
}

// DefaultShards is the shard count when none is given: one per group of
// dependent items, at most 10.
func DefaultShards(p *study.Plan) int {
	return max(1, min(10, len(p.Groups())))
}
