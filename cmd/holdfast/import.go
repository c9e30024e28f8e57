package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"

	"holdfast/daemon/seriesio"
)

const importSynopsis = `--data DIR [--skip-bad] FILE.csv

Loads history from a CSV file into the data directory's store. The first
line is a header naming the columns gauge, time and value, and optionally
raw, quality and calibration (holdfast export --format csv writes all six).
Times are RFC 3339 (2031-03-14T22:00:00.250Z) or Unix milliseconds;
numbers may be NaN, +Inf or -Inf; quality is ok, over-range, under-range,
sensor-fault, off or a code; gauge names are letters, digits, '.', '_'
and '-'.

The whole file is checked first: a line that cannot be read is reported
with its line number (all of them, up to 20) and nothing is stored, unless
--skip-bad stores the good lines. A row identical to a sample already
stored is skipped as a duplicate; a row with the same gauge and time but
another value is stored beside the existing sample, which is never
replaced. Import refuses while a daemon holds the directory: stop it first.`

func cmdImport(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("import", importSynopsis, stderr)
	dir := fs.String("data", "", "data `directory` to import into (created if missing)")
	skip := fs.Bool("skip-bad", false, "store the good lines even when some cannot be read")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *dir == "" || fs.NArg() != 1 {
		fs.Usage()
		return errUsage("import needs --data DIR and one FILE.csv")
	}
	file := fs.Arg(0)
	if _, err := os.Stat(file); err != nil {
		return fmt.Errorf("import: %w", err)
	}
	db, err := openWritable(*dir, "import", true)
	if err != nil {
		return err
	}
	im := seriesio.Import{Name: file, SkipBad: *skip}
	res, err := im.Run(db, func() (io.ReadCloser, error) { return os.Open(file) })
	err = errors.Join(err, db.Close())
	var ie *seriesio.ImportError
	if errors.As(err, &ie) {
		fmt.Fprintln(stderr, ie.Error())
		return fmt.Errorf("import: nothing stored; fix the lines above or give --skip-bad to store the %d good ones", res.Rows-res.Bad)
	}
	if err != nil {
		return fmt.Errorf("import: %w", err)
	}
	for _, l := range res.BadLines {
		fmt.Fprintf(stderr, "%s:%d: skipped: %s\n", file, l.Line, l.Msg)
	}
	if more := res.Bad - len(res.BadLines); more > 0 {
		fmt.Fprintf(stderr, "… and %d more skipped\n", more)
	}
	fmt.Fprintf(stdout, "imported %d samples from %s into %s (%d rows, %d duplicates skipped, %d bad lines skipped)\n",
		res.Stored, file, *dir, res.Rows, res.Duplicates, res.Bad)
	return nil
}
