package main

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"io"
	"slices"
)

// fitWriter writes fit's results as they come, group by group: the JSON
// document or the table to the output, and, with --weights, each row's
// line of the weights CSV to a buffer (the file is written whole, at the
// end). The output is the same, byte for byte, as a document of all the
// fits written at once.
type fitWriter struct {
	w      io.Writer
	asJSON bool
	// JSON: the document so far, written out in pieces of about 64 kB,
	// and the coefficients' names in encoding/json's order.
	j      jsonIndent
	sorted []string
	// The table, buffered, and one fit's lines.
	table   *bufio.Writer
	scratch []byte
	// The weights CSV, nil without --weights.
	weights    *csv.Writer
	weightsBuf bytes.Buffer
	withGroup  bool
}

// newFitWriter starts the output of fits of the estimator es, whose
// coefficients are names.
func newFitWriter(w io.Writer, es fitEstimator, names []string, asJSON, weights, withGroup bool) *fitWriter {
	fw := &fitWriter{w: w, asJSON: asJSON, withGroup: withGroup}
	if asJSON {
		fw.sorted = slices.Clone(names)
		slices.Sort(fw.sorted)
		fw.j = jsonIndent{b: make([]byte, 0, 1<<17)}
		appendFitJSONHead(&fw.j, es)
		fw.j.open('[')
	} else {
		fw.table = bufio.NewWriterSize(w, 64<<10)
		writeFitTableHead(fw.table, es)
	}
	if weights {
		fw.weights = csv.NewWriter(&fw.weightsBuf)
		fw.weights.Write(weightsHeader(withGroup))
	}
	return fw
}

// fit writes one fit, which the caller may then reuse.
func (fw *fitWriter) fit(f *fitJSON) error {
	if fw.weights != nil {
		writeWeightsCSV(fw.weights, f, fw.withGroup)
	}
	if !fw.asJSON {
		return writeFitTableFit(fw.table, f, &fw.scratch)
	}
	appendFitJSON(&fw.j, f, fw.sorted)
	if len(fw.j.b) < 1<<16 {
		return nil
	}
	_, err := fw.w.Write(fw.j.b)
	fw.j.b = fw.j.b[:0]
	return err
}

// end finishes the output.
func (fw *fitWriter) end() error {
	if !fw.asJSON {
		writeFitTableTail(fw.table)
		return fw.table.Flush()
	}
	fw.j.close(']')
	appendFitJSONTail(&fw.j)
	_, err := fw.w.Write(fw.j.b)
	return err
}

// weightsCSV returns the weights CSV of every fit written.
func (fw *fitWriter) weightsCSV() []byte {
	fw.weights.Flush()
	return fw.weightsBuf.Bytes()
}
