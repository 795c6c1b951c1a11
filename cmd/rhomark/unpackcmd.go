package main

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"strconv"

	"github.com/rhomark/rhomark/results"
)

// unpackHeader is the header of the CSV that unpack prints.
var unpackHeader = []string{"cell", "replicate", "estimator", "coefficient", "estimate", "status", "iterations"}

func unpackCmd(e env, args []string) error {
	fs := newFlags(e, "unpack", "RUN.replicates",
		"Prints a replicate file (written by run --keep-replicates) as a tidy CSV on\nstdout, one row per replicate × estimator × coefficient, with the header\n  cell,replicate,estimator,coefficient,estimate,status,iterations\nEstimates are printed with the fewest digits that read back to the same\nfloat64 (NaN for a fit that could not be computed). A damaged file stops the\noutput with exit status 2; the rows printed before the damage are sound.")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("want one replicate file (NAME.replicates), got %d arguments", len(pos))
	}
	path := pos[0]
	f, err := os.Open(path)
	if err != nil {
		return err
	}
	defer f.Close()
	bw := bufio.NewWriterSize(e.stdout, 1<<16)
	err = unpack(bw, f)
	if ferr := bw.Flush(); err == nil {
		err = ferr
	}
	if errors.Is(err, results.ErrDamagedReplicates) {
		return dataError{fmt.Errorf("%s: %w", path, err)}
	}
	return err
}

// unpack writes the records of the replicate file r as CSV rows to w.
func unpack(w io.Writer, r io.Reader) error {
	rr, err := results.NewReplicateReader(r)
	if err != nil {
		return err
	}
	cw := csv.NewWriter(w)
	if err := cw.Write(unpackHeader); err != nil {
		return err
	}
	row := make([]string, len(unpackHeader))
	for {
		rec, err := rr.Next()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			cw.Flush()
			return err
		}
		lay := rr.Header.Cells[rec.Cell]
		row[0] = strconv.Itoa(rec.Cell)
		row[1] = strconv.Itoa(rec.Replicate)
		row[2] = lay.Estimators[rec.Estimator]
		row[5] = rec.Status
		row[6] = strconv.Itoa(rec.Iterations)
		for j, v := range rec.Coefficients {
			row[3] = lay.Coefficients[j]
			row[4] = strconv.FormatFloat(v, 'g', -1, 64)
			if err := cw.Write(row); err != nil {
				return err
			}
		}
	}
	cw.Flush()
	return cw.Error()
}
