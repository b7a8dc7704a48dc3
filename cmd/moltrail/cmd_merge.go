package main

import (
	"errors"
	"fmt"
	"io"

	"moltrail/archive"
)

func init() {
	register(Command{Name: "merge", Summary: "bring archives (a study's shard archives) into one: checked like import, never overwriting", Run: cmdMerge})
}

const mergeHelp = `Copies into the target archive (--archive) every record and note of the
source archives (the other DIRECTORY arguments) that it lacks. A source is
an archive directory, or a directory of archives such as a study's shards
directory (each archive in it is a source).

Every record goes through the checks of import: the record schema, strict
decoding, its id and input key against its content, its signature (one
that does not match is refused; with --trusted-only also unsigned records
and keys the target does not trust), its job as run would check it, and its
lineage (to a record in the target or in a source). A record the target
holds already with the same bytes is counted as present; a record whose id
the target holds with other bytes is refused and named (ids are content
hashes, so one copy is damaged or forged), and the target keeps its own.
Nothing is ever overwritten, so merging again adds nothing. Lineage travels
inside the records; notes are copied with their records. The records that
pass are added even when others are refused.

A merge stopped at any point (Ctrl-C, a killed job, a lost node) leaves the
target holding whole records only; running the same merge again completes
it. Records are written several to a transaction (one disk sync each).

Exit status: 0 everything merged, 1 some record or note was refused or the
merge failed, 2 bad usage or a source that is not an archive.
`

func cmdMerge(args []string, stdout, stderr io.Writer) int {
	fs := newFlags("merge", stderr, "--archive DIRECTORY DIRECTORY… [--json]\n\n"+mergeHelp)
	af := addArchiveFlags(fs)
	asJSON := fs.Bool("json", false, "print the summary as JSON")
	trustedOnly := fs.Bool("trusted-only", false, "refuse records that are unsigned or signed by a key the target archive does not trust (see moltrail trust)")
	pos, code, ok := parseFlags(fs, args)
	if !ok {
		return code
	}
	if len(pos) == 0 {
		fmt.Fprintln(stderr, "moltrail merge: give one or more source archives (or a directory of them) to merge into --archive")
		return exitUsage
	}
	srcs, err := archive.MergeSources(pos)
	if err != nil {
		return fail(stderr, archiveErrCode(err), "merge", err)
	}
	st, code, err := af.open(false, stderr)
	if err != nil {
		return fail(stderr, code, "merge", err)
	}
	defer st.Close()
	rep, err := st.Merge(srcs, archive.MergeOptions{Wait: af.waitOrNone(), TrustedOnly: *trustedOnly, Progress: func(src string, done, total int) {
		fmt.Fprintf(stderr, "moltrail merge: %s: %d of %d records done\n", src, done, total)
	}})
	if cerr := st.Close(); err == nil && cerr != nil {
		err = fmt.Errorf("archive %s: closing after the merge: %v", af.path(), cerr)
	}
	for _, r := range rep.Refused {
		fmt.Fprintf(stderr, "moltrail merge: %s\n", r.Reason)
	}
	if err != nil {
		code := exitFailed
		if errors.Is(err, archive.ErrNoArchive) || errors.Is(err, archive.ErrNotArchive) {
			code = exitUsage
		}
		return fail(stderr, code, "merge", fmt.Errorf("%v; what was merged before this stays merged, and running the merge again continues it", err))
	}
	if *asJSON {
		if err := printJSON(stdout, rep); err != nil {
			return fail(stderr, exitFailed, "merge", err)
		}
	} else {
		for _, s := range rep.Sources {
			fmt.Fprintf(stdout, "  %s: %d record(s): %d added, %d already present, %d refused\n", s.Dir, s.Records, s.Added, s.Present, s.Refused)
		}
		fmt.Fprintf(stdout, "merged %d archive(s) into %s: %d record(s) read, %d added, %d already present, %d refused; notes: %d added, %d already present\n",
			len(rep.Sources), rep.Target, rep.Records, rep.Added, rep.Present, len(rep.Refused), rep.NotesAdded, rep.NotesPresent)
	}
	if len(rep.Refused) > 0 {
		return exitFailed
	}
	return exitOK
}
