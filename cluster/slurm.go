package cluster

import (
	"bytes"
	"context"
	"fmt"
	"os/exec"
	"strings"
	"time"
)

// Scheduler submits jobs and reports their states.
type Scheduler interface {
	// Submit runs sbatch with the arguments (the script last) and
	// returns the new job's id.
	Submit(args ...string) (string, error)
	// States returns the state of each known job and array task ("123",
	// "123_4" → "RUNNING"); note says what could not be asked.
	States(ids []string) (states map[string]string, note string)
}

// Slurm is the Scheduler of the Slurm commands on PATH.
type Slurm struct {
	// Timeout bounds each command (0 = 60 s).
	Timeout time.Duration
}

func (s Slurm) run(name string, args ...string) (string, error) {
	t := s.Timeout
	if t <= 0 {
		t = time.Minute
	}
	ctx, cancel := context.WithTimeout(context.Background(), t)
	defer cancel()
	cmd := exec.CommandContext(ctx, name, args...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	err := cmd.Run()
	if err != nil {
		msg := strings.TrimSpace(errb.String())
		if msg == "" {
			msg = err.Error()
		}
		if i := strings.IndexByte(msg, '\n'); i >= 0 {
			msg = msg[:i]
		}
		return out.String(), fmt.Errorf("%s: %s", name, msg)
	}
	return out.String(), nil
}

// Submit runs `sbatch --parsable ARGS…`.
func (s Slurm) Submit(args ...string) (string, error) {
	if _, err := exec.LookPath("sbatch"); err != nil {
		return "", fmt.Errorf("sbatch is not on PATH: submit from a machine of the cluster, or run the written scripts with sbatch yourself")
	}
	out, err := s.run("sbatch", append([]string{"--parsable"}, args...)...)
	if err != nil {
		return "", err
	}
	return parseParsable(out)
}

// parseParsable reads sbatch --parsable output: "ID" or "ID;CLUSTER".
func parseParsable(out string) (string, error) {
	line := strings.TrimSpace(out)
	if i := strings.LastIndexByte(line, '\n'); i >= 0 {
		line = strings.TrimSpace(line[i+1:])
	}
	id, _, _ := strings.Cut(line, ";")
	if id == "" || strings.Trim(id, "0123456789") != "" {
		return "", fmt.Errorf("sbatch printed %q, not a job id", strings.TrimSpace(out))
	}
	return id, nil
}

// States asks squeue (every state it still knows) and, for what squeue
// no longer lists, sacct where the site keeps accounting.
func (s Slurm) States(ids []string) (map[string]string, string) {
	states := map[string]string{}
	var notes []string
	list := strings.Join(ids, ",")
	if _, err := exec.LookPath("squeue"); err != nil {
		notes = append(notes, "squeue is not on PATH")
	} else if out, err := s.run("squeue", "--noheader", "--array", "--states=all", "--jobs="+list, "--format=%i|%T"); err != nil {
		notes = append(notes, err.Error())
	} else {
		parseStates(out, states)
	}
	if _, err := exec.LookPath("sacct"); err == nil {
		if out, err := s.run("sacct", "--noheader", "--parsable2", "--jobs="+list, "--format=JobID,State"); err == nil {
			found := map[string]string{}
			parseStates(out, found)
			for k, v := range found {
				if _, ok := states[k]; !ok {
					states[k] = v
				}
			}
		} else if len(states) == 0 {
			notes = append(notes, err.Error())
		}
	}
	return states, strings.Join(notes, "; ")
}

// parseStates reads "JOBID|STATE" lines (squeue and sacct); job steps
// ("123_4.batch") and unexpanded ranges ("123_[5-9]") are left out, and a
// state's extra words ("CANCELLED by 0") are dropped.
func parseStates(out string, into map[string]string) {
	for _, line := range strings.Split(out, "\n") {
		id, state, ok := strings.Cut(strings.TrimSpace(line), "|")
		if !ok || id == "" || strings.ContainsAny(id, ".[") {
			continue
		}
		if f := strings.Fields(state); len(f) > 0 {
			into[id] = f[0]
		}
	}
}
