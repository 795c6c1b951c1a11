package results

import (
	"bufio"
	"cmp"
	"compress/flate"
	"compress/gzip"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
)

// The replicate file keeps every replicate's estimates, iterations and
// status, for paired comparisons and replays. Its layout (version 1), all
// inside one gzip stream whose CRC detects truncation and corruption:
//
//	"rhomark replicates 1\n"
//	one line of JSON: ReplicateHeader
//	blocks, in cell order and, within a cell, replicate order:
//	  uvarint cell, uvarint first replicate, uvarint count, then for each
//	  replicate and each estimator of the cell: one byte status code (an
//	  index into Header.Statuses), uvarint iterations, and the coefficients
//	  as little-endian IEEE-754 float64 bits.
//
// 100,000 replicates of five estimators with five coefficients take about
// 21 MB before compression.

// ErrDamagedReplicates is wrapped by every error of ReplicateReader about
// the content of a replicate file (not a replicate file, truncated,
// corrupted, out of range): bad input rather than a failure of the reader.
var ErrDamagedReplicates = errors.New("damaged replicate file")

// damaged is an error about a replicate file's content: its message, and
// ErrDamagedReplicates for errors.Is.
type damaged struct{ msg string }

func (d damaged) Error() string        { return d.msg }
func (d damaged) Is(target error) bool { return target == ErrDamagedReplicates }

// damagedf returns a damaged error.
func damagedf(format string, args ...any) error { return damaged{fmt.Sprintf(format, args...)} }

// replicateMagic opens every replicate file.
const replicateMagic = "rhomark replicates 1\n"

// ReplicateHeader describes a replicate file.
type ReplicateHeader struct {
	Scenario   string            `json:"scenario"`   // the scenario's name
	Hash       string            `json:"hash"`       // the scenario's hash (see ScenarioInfo.Hash)
	Seed       uint64            `json:"seed"`       // the run's root seed
	Replicates int               `json:"replicates"` // replicates per cell
	Statuses   []string          `json:"statuses"`   // status names, indexed by the status byte of a record
	Cells      []ReplicateLayout `json:"cells"`      // the layout of each cell, indexed by cell
}

// ReplicateLayout is the shape of one cell's records.
type ReplicateLayout struct {
	Estimators   []string `json:"estimators"`   // estimator labels, in record order
	Coefficients []string `json:"coefficients"` // coefficient names, in the order of each record's values
}

// ReplicateRecord is one estimator's fit of one replicate.
type ReplicateRecord struct {
	Cell, Replicate, Estimator int       // indices from 0; Estimator indexes the cell's ReplicateLayout.Estimators
	Status                     string    // name of the fit's final status
	Iterations                 int       // iterations the fit took
	Coefficients               []float64 // estimates, in the order of ReplicateLayout.Coefficients
}

// ReplicateWriter writes a replicate file.
type ReplicateWriter struct {
	gz  *gzip.Writer
	err error
}

// NewReplicateWriter writes the header to w and returns a writer for the
// blocks. Close must be called to finish the file.
func NewReplicateWriter(w io.Writer, h ReplicateHeader) (*ReplicateWriter, error) {
	gz, _ := gzip.NewWriterLevel(w, gzip.BestSpeed)
	rw := &ReplicateWriter{gz: gz}
	head, err := json.Marshal(h)
	if err != nil {
		return nil, err
	}
	if _, err := io.WriteString(gz, replicateMagic); err != nil {
		return nil, err
	}
	if _, err := gz.Write(append(head, '\n')); err != nil {
		return nil, err
	}
	return rw, nil
}

// EncodeBlock appends one block to dst: cell, first replicate, count, and the records,
// replicate by replicate and estimator by estimator. statuses[k], iters[k]
// and coefs[k*p:(k+1)*p] belong to the k-th (replicate, estimator) pair.
func EncodeBlock(dst []byte, cell, first, count int, statuses []uint8, iters []int, coefs []float64, p int) []byte {
	dst = binary.AppendUvarint(dst, uint64(cell))
	dst = binary.AppendUvarint(dst, uint64(first))
	dst = binary.AppendUvarint(dst, uint64(count))
	for k, s := range statuses {
		dst = append(dst, s)
		dst = binary.AppendUvarint(dst, uint64(iters[k]))
		for _, c := range coefs[k*p : (k+1)*p] {
			dst = binary.LittleEndian.AppendUint64(dst, math.Float64bits(c))
		}
	}
	return dst
}

// WriteBlock writes an encoded block.
func (rw *ReplicateWriter) WriteBlock(block []byte) error {
	if rw.err != nil {
		return rw.err
	}
	_, rw.err = rw.gz.Write(block)
	return rw.err
}

// Close finishes the gzip stream.
func (rw *ReplicateWriter) Close() error {
	if err := rw.gz.Close(); rw.err == nil {
		rw.err = err
	}
	return rw.err
}

// ReplicateReader reads a replicate file record by record.
type ReplicateReader struct {
	Header ReplicateHeader // the file's header, read by NewReplicateReader
	br     *bufio.Reader
	// the current block
	cell, next, left int
	est              int
}

// NewReplicateReader reads the header of a replicate file.
func NewReplicateReader(r io.Reader) (*ReplicateReader, error) {
	gz, err := gzip.NewReader(r)
	if err != nil {
		return nil, damagedf("not a replicate file (%v)", err)
	}
	br := bufio.NewReader(gz)
	magic := make([]byte, len(replicateMagic))
	if _, err := io.ReadFull(br, magic); err != nil || string(magic) != replicateMagic {
		return nil, damagedf("not a replicate file of this version (bad first line)")
	}
	line, err := br.ReadBytes('\n')
	if err != nil {
		return nil, damagedf("replicate file header: %v", corrupt(err))
	}
	rr := &ReplicateReader{br: br}
	if err := json.Unmarshal(line, &rr.Header); err != nil {
		return nil, damagedf("replicate file header: %v", err)
	}
	if len(rr.Header.Statuses) > 256 {
		return nil, damagedf("replicate file header: too many statuses")
	}
	return rr, nil
}

// corrupt turns the errors of a cut or damaged gzip stream into a clear
// message.
func corrupt(err error) error {
	var flateErr flate.CorruptInputError
	if errors.Is(err, io.ErrUnexpectedEOF) || errors.Is(err, gzip.ErrChecksum) || errors.Is(err, gzip.ErrHeader) ||
		errors.Is(err, io.EOF) || errors.As(err, &flateErr) {
		return damagedf("the file is truncated or corrupted (%v); re-run to regenerate it", err)
	}
	return err
}

// Next returns the next record, or io.EOF after the last one. A truncated
// or corrupted file gives an error saying so.
func (rr *ReplicateReader) Next() (ReplicateRecord, error) {
	var rec ReplicateRecord
	if rr.left == 0 {
		cell, err := binary.ReadUvarint(rr.br)
		if errors.Is(err, io.EOF) {
			return rec, io.EOF
		}
		if err != nil {
			return rec, corrupt(err)
		}
		first, err1 := binary.ReadUvarint(rr.br)
		count, err2 := binary.ReadUvarint(rr.br)
		if err := cmp.Or(err1, err2); err != nil {
			return rec, corrupt(err)
		}
		if cell >= uint64(len(rr.Header.Cells)) || count == 0 || count > 1<<30 || first > 1<<40 || len(rr.Header.Cells[cell].Estimators) == 0 {
			return rec, damagedf("the replicate file is corrupted (a block is out of range)")
		}
		rr.cell, rr.next, rr.est = int(cell), int(first), 0
		rr.left = int(count) * len(rr.Header.Cells[cell].Estimators)
	}
	lay := rr.Header.Cells[rr.cell]
	s, err := rr.br.ReadByte()
	if err != nil {
		return rec, corrupt(err)
	}
	it, err := binary.ReadUvarint(rr.br)
	if err != nil {
		return rec, corrupt(err)
	}
	if int(s) >= len(rr.Header.Statuses) {
		return rec, damagedf("the replicate file is corrupted (unknown status code)")
	}
	rec = ReplicateRecord{Cell: rr.cell, Replicate: rr.next, Estimator: rr.est, Status: rr.Header.Statuses[s], Iterations: int(it),
		Coefficients: make([]float64, len(lay.Coefficients))}
	var b [8]byte
	for j := range rec.Coefficients {
		if _, err := io.ReadFull(rr.br, b[:]); err != nil {
			return rec, corrupt(err)
		}
		rec.Coefficients[j] = math.Float64frombits(binary.LittleEndian.Uint64(b[:]))
	}
	rr.left--
	rr.est++
	if rr.est == len(lay.Estimators) {
		rr.est = 0
		rr.next++
	}
	return rec, nil
}
