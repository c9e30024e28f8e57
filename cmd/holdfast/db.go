package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"text/tabwriter"
	"time"

	"holdfast/daemon"
	"holdfast/daemon/store"
)

const dbSynopsis = `stats|compact|backup [flags]

  stats    per gauge: samples, time span, chunks, bytes, bytes per sample;
           the file's size and free pages (--json for data)
  compact  rewrite the file without its free pages, offline
  backup   a consistent copy of the file, hot, through the running daemon

Run 'holdfast db <subcommand> --help' for its flags.`

func cmdDB(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	subs := map[string]func(context.Context, []string, io.Writer, io.Writer) error{
		"stats": cmdDBStats, "compact": cmdDBCompact, "backup": cmdDBBackup,
	}
	if len(args) == 0 || subs[args[0]] == nil {
		fs := newFlags("db", dbSynopsis, stderr)
		if len(args) > 0 && (args[0] == "-h" || args[0] == "--help" || args[0] == "help") {
			fs.Usage()
			return nil
		}
		fs.Usage()
		return errUsage("db needs a subcommand: stats, compact or backup")
	}
	return subs[args[0]](ctx, args[1:], stdout, stderr)
}

func cmdDBStats(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("db stats", "--data DIR [--json]\n\nHow the store holds each gauge, read-only. While a daemon holds the\ndirectory the figures come from its API instead (said on stderr).", stderr)
	src := addSourceFlags(fs)
	asJSON := fs.Bool("json", false, "print JSON (totals samples, payload_bytes, file_bytes; file; series)")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		fs.Usage()
		return errUsage("db stats takes no arguments")
	}
	if err := src.resolve(fs); err != nil {
		return err
	}
	db, err := src.openDirect(stderr)
	if err != nil {
		return fmt.Errorf("db stats: %w", err)
	}
	var st daemon.DBStatsJSON
	if db != nil {
		st, err = daemon.DBStats(db)
		err = errors.Join(err, db.Close())
	} else {
		err = src.api.do(ctx, "GET", "/api/v1/db/stats", nil, &st)
	}
	if err != nil {
		return fmt.Errorf("db stats: %w", err)
	}
	if *asJSON {
		return printJSON(stdout, st)
	}
	tw := tabwriter.NewWriter(stdout, 0, 4, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "gauge\tsamples\tfirst\tlast\tchunks\tbytes\tB/sample\t")
	for _, s := range st.Series {
		fmt.Fprintf(tw, "%s\t%d\t%s\t%s\t%d\t%d\t%.2f\t\n", s.Gauge, s.Samples, stamp(s.First), stamp(s.Last), s.Chunks, s.PayloadBytes, s.BytesPerSample)
		if s.DamagedChunks > 0 {
			fmt.Fprintf(tw, "%s\t%d damaged chunks (not counted)\t\t\t\t\t\t\n", "", s.DamagedChunks)
		}
	}
	fmt.Fprintf(tw, "total\t%d\t\t\t\t%d\t%.2f\t\n", st.Samples, st.PayloadBytes, st.BytesPerSample)
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "file %s: %d bytes (%d in use), %d free pages of %d bytes\n",
		st.File.Path, st.FileBytes, st.File.UsedBytes, st.File.FreePages, st.File.PageSize)
	return nil
}

func stamp(t time.Time) string {
	if t.IsZero() {
		return "-"
	}
	return t.UTC().Format("2006-01-02T15:04:05Z")
}

const compactSynopsis = `--data DIR [--no-keep]

Rewrites the store file without its free pages (bbolt never shrinks a file
by itself; retention frees pages inside it). Offline: refused while a daemon
holds the directory. The copy is written beside the file and checked
(every series' sample count must match) before it replaces the file in one
rename; the previous file is kept as holdfast.db.before-compact unless
--no-keep. On any failure the original file is left as it was.`

func cmdDBCompact(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("db compact", compactSynopsis, stderr)
	dir := fs.String("data", "", "data `directory`")
	noKeep := fs.Bool("no-keep", false, "do not keep the previous file as holdfast.db.before-compact")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *dir == "" || fs.NArg() > 0 {
		fs.Usage()
		return errUsage("db compact needs --data DIR")
	}
	db, err := openWritable(*dir, "db compact", false)
	if err != nil {
		return err
	}
	defer db.Close() // holds the lock until the new file is in place
	path := db.Path()
	before, err := db.SeriesStats()
	if err != nil {
		return fmt.Errorf("db compact: %w", err)
	}
	tmp := fmt.Sprintf("%s.compact-%d", path, os.Getpid())
	if err := db.Compact(tmp); err != nil {
		return fmt.Errorf("db compact: %w", err)
	}
	if err := sameCounts(tmp, before); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("db compact: the copy %s does not match, original kept: %w", tmp, err)
	}
	oldSize, newSize := fileSize(path), fileSize(tmp)
	keep := path + ".before-compact"
	if !*noKeep {
		os.Remove(keep)
		if err := os.Link(path, keep); err != nil {
			os.Remove(tmp)
			return fmt.Errorf("db compact: keep the previous file: %w (original kept; or give --no-keep)", err)
		}
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("db compact: %w (original kept)", err)
	}
	if d, err := os.Open(filepath.Dir(path)); err == nil {
		d.Sync() // make the rename durable
		d.Close()
	}
	fmt.Fprintf(stdout, "compacted %s: %d → %d bytes\n", path, oldSize, newSize)
	if !*noKeep {
		fmt.Fprintf(stdout, "the previous file is %s; remove it once the daemon runs happily on the new one\n", keep)
	}
	return nil
}

// sameCounts opens a compacted copy and checks every series holds as many
// samples as before.
func sameCounts(path string, before []store.SeriesStats) error {
	cp, err := store.Open(path, store.Options{ReadOnly: true, Timeout: lockWait})
	if err != nil {
		return err
	}
	defer cp.Close()
	after, err := cp.SeriesStats()
	if err != nil {
		return err
	}
	if len(after) != len(before) {
		return fmt.Errorf("%d series, before %d", len(after), len(before))
	}
	for i := range after {
		if after[i].Series != before[i].Series || after[i].Samples != before[i].Samples {
			return fmt.Errorf("series %s: %d samples, before %s: %d", after[i].Series, after[i].Samples, before[i].Series, before[i].Samples)
		}
	}
	return nil
}

func fileSize(path string) int64 {
	fi, err := os.Stat(path)
	if err != nil {
		return 0
	}
	return fi.Size()
}

const backupSynopsis = `FILE [--config FILE | --daemon URL --token-file F | --data DIR]

Writes a consistent copy of the store file to FILE (which must not exist).
While a daemon runs the copy is taken hot, through its API (POST
/api/v1/db/backup, needs the bearer token): polling goes on meanwhile and
the copy is the file as of one moment. With --data DIR and no daemon
holding it, the file is copied directly from a read-only open (said on
stderr). The copy is itself a store: holdfast db stats --data on a
directory holding it as holdfast.db reads it. It is marked as a backup, so
a daemon that runs on it once it is restored gives it a new instance id
and reuses none of the original's dedupe keys.`

func cmdDBBackup(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("db backup", backupSynopsis, stderr)
	src := addSourceFlags(fs)
	file, args := firstArg(args)
	if err := fs.Parse(args); err != nil {
		return err
	}
	if file == "" && fs.NArg() == 1 {
		file = fs.Arg(0)
	} else if file == "" || fs.NArg() > 0 {
		fs.Usage()
		return errUsage("db backup needs one FILE")
	}
	if err := src.resolve(fs); err != nil {
		return err
	}
	db, err := src.openDirect(stderr)
	if err != nil {
		return fmt.Errorf("db backup: %w", err)
	}
	f, err := createNew(file)
	if err != nil {
		if db != nil {
			db.Close()
		}
		return fmt.Errorf("db backup: %w", err)
	}
	var n int64
	if db != nil {
		n, err = db.Backup(f)
		err = errors.Join(err, db.Close())
	} else {
		n, err = src.api.stream(ctx, "POST", "/api/v1/db/backup", "", f)
	}
	err = errors.Join(err, f.Sync(), f.Close())
	if err == nil {
		err = sameStore(file)
	}
	if err == nil {
		err = daemon.MarkBackup(file) // a restored copy gets a new instance id, so no dedupe key repeats
	}
	if err != nil {
		os.Remove(file)
		return fmt.Errorf("db backup: %w", err)
	}
	fmt.Fprintf(stdout, "backed up %d bytes to %s\n", n, file)
	return nil
}

// sameStore checks a backup opens as a store.
func sameStore(path string) error {
	db, err := store.Open(path, store.Options{ReadOnly: true, Timeout: lockWait})
	if err != nil {
		return fmt.Errorf("the copy does not open as a store: %w", err)
	}
	return db.Close()
}

// createNew creates a file that must not exist yet.
func createNew(path string) (*os.File, error) {
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o600)
	if errors.Is(err, os.ErrExist) {
		return nil, fmt.Errorf("%s exists; choose a new file name (nothing is overwritten)", path)
	}
	return f, err
}

func removeFile(path string) { os.Remove(path) }
