package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"

	"holdfast/calib"
)

const convertSynopsis = "[flags] VALUE FROM TO  |  [flags] 'VALUE FROM' TO  |  --list"

const convertExamples = `
examples:
  holdfast convert 1 Torr Pa                        133.322
  holdfast convert 1.5e-6 'mbar*L/s' 'Pa*m3/s'      1.5e-07
  holdfast convert '150 mTorr' mbar                 0.199984
  holdfast convert -40 C F                          -40
  holdfast convert --digits 3 1 atm psi             14.7
  holdfast convert --list

Quote units with "*" or spaces for the shell. Unit names are case-sensitive
where SI needs it (mPa, MPa); otherwise "torr" or "MBAR" work too. "micron"
is µmHg beside a pressure unit and µm beside a length. Temperatures are
readings, not differences.
`

// cmdConvert converts a quantity between units and prints the number alone.
func cmdConvert(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("convert", convertSynopsis, stderr)
	digits := fs.Int("digits", 6, "significant `digits` to print, 1 to 17")
	list := fs.Bool("list", false, "list the known units, grouped by dimension")
	flagUsage := fs.Usage
	fs.Usage = func() {
		flagUsage()
		fmt.Fprint(stderr, convertExamples)
	}
	operands, err := convertOperands(fs, args)
	if err != nil {
		return err
	}
	if *list {
		if len(operands) > 0 {
			return fmt.Errorf("convert: --list takes no arguments, got %q", operands)
		}
		return writeUnitList(stdout)
	}
	if *digits < 1 || *digits > 17 {
		return fmt.Errorf("convert: --digits must be 1 to 17, got %d", *digits)
	}
	v, err := convertValue(operands)
	if err != nil {
		if errors.Is(err, errConvertUsage) {
			fs.Usage()
		}
		return fmt.Errorf("convert: %w", err)
	}
	fmt.Fprintln(stdout, strconv.FormatFloat(v, 'g', *digits, 64))
	return nil
}

var errConvertUsage = errors.New("want VALUE FROM TO, e.g. holdfast convert 1 Torr Pa")

// convertValue converts VALUE FROM TO, or "VALUE FROM" TO.
func convertValue(operands []string) (float64, error) {
	switch len(operands) {
	case 3:
		v, err := strconv.ParseFloat(operands[0], 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
			return 0, fmt.Errorf("%q is not a finite number", operands[0])
		}
		return calib.Convert(v, operands[1], operands[2])
	case 2:
		if _, err := strconv.ParseFloat(operands[0], 64); err == nil {
			return 0, fmt.Errorf("%q has no unit to convert from; %w", operands[0], errConvertUsage)
		}
		return convertQuantity(operands[0], operands[1])
	}
	return 0, fmt.Errorf("got %d arguments; %w", len(operands), errConvertUsage)
}

// convertQuantity converts a quantity with its unit ("150 mTorr") to the
// unit to. The dimension comes from to; a name with two meanings (micron)
// takes the one the quantity fits.
func convertQuantity(q, to string) (float64, error) {
	var firstErr error
	for _, d := range calib.Dimensions() {
		u, err := calib.ParseUnit(to, d)
		if err != nil {
			continue
		}
		si, err := calib.Parse(q, d)
		if err == nil {
			return u.FromSI(si), nil
		}
		if firstErr == nil {
			firstErr = err
		}
	}
	if firstErr != nil {
		return 0, firstErr
	}
	_, err := calib.LookupUnit(to) // to is unknown: this error lists every unit
	return 0, err
}

// convertOperands parses flags placed anywhere among the arguments and
// returns the rest in order. A negative number ("-40") is an operand, not a
// flag; everything after "--" is an operand.
func convertOperands(fs *flag.FlagSet, args []string) ([]string, error) {
	var operands []string
	for len(args) > 0 {
		if convertIsNegativeNumber(args[0]) {
			operands, args = append(operands, args[0]), args[1:]
			continue
		}
		if err := fs.Parse(args); err != nil {
			return nil, err
		}
		rest := fs.Args()
		if used := args[:len(args)-len(rest)]; len(used) > 0 && used[len(used)-1] == "--" {
			return append(operands, rest...), nil
		}
		if len(rest) == 0 {
			break
		}
		operands, args = append(operands, rest[0]), rest[1:]
	}
	return operands, nil
}

func convertIsNegativeNumber(s string) bool {
	return len(s) > 1 && s[0] == '-' && (s[1] >= '0' && s[1] <= '9' || s[1] == '.')
}

// writeUnitList prints every known unit, grouped by dimension, with what one
// of it is in the base unit, its other names and any note.
func writeUnitList(w io.Writer) error {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	for i, d := range calib.Dimensions() {
		if i > 0 {
			fmt.Fprintln(tw)
		}
		base := d.Base()
		fmt.Fprintf(tw, "%s (held in %s)\n", d, base.Symbol())
		for _, u := range calib.Units(d) {
			size := ""
			if !u.Affine() {
				size = "= " + strconv.FormatFloat(u.ToSI(1), 'g', 9, 64) + " " + base.Symbol()
			}
			about := u.Note()
			if a := u.Aliases(); len(a) > 0 {
				about = strings.TrimPrefix(about+"; also "+strings.Join(a, ", "), "; ")
			}
			fmt.Fprintf(tw, "  %s\t%s\t%s\t%s\n", u.Name, u.Symbol(), size, about)
		}
	}
	return tw.Flush()
}
