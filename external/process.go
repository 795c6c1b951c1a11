package external

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"sync"
	"time"
)

// DefaultTimeout is the time a program has for one reply when
// Command.Timeout is zero.
const DefaultTimeout = 60 * time.Second

// MaxReplyBytes bounds the length of one reply line; a longer line is a
// BadReply.
const MaxReplyBytes = 8 << 20

// closeGrace is how long Close waits for a program to end by itself after
// its standard input is closed, and for its standard error to be copied,
// before it kills the program or stops waiting.
const closeGrace = 5 * time.Second

// Command says how to run an outside estimator.
type Command struct {
	// Label names the estimator in messages and prefixes its standard
	// error lines ("[label] ...").
	Label string
	// Args is the program and its arguments. The program is started
	// directly, with no shell; a program name without a slash is looked
	// up in PATH, one with a slash is taken relative to Dir.
	Args []string
	// Dir is the program's working directory; "" means ours.
	Dir string
	// Timeout bounds the wait for each reply; zero means DefaultTimeout.
	Timeout time.Duration
	// StartTimeout is extra time allowed, on top of Timeout, for the first
	// reply after each start of the program, when it loads its libraries
	// or compiles; zero means none.
	StartTimeout time.Duration
	// Stderr receives the program's standard error, line by line, each
	// line prefixed by "[Label] " and written by one call to Write. Nil
	// discards it. A Writer shared by several Processes must be safe for
	// concurrent use (os.Stderr is).
	Stderr io.Writer
}

// Reply is the outcome of one fit.
type Reply struct {
	// Coefficients are the p fitted coefficients when Status is OK or
	// NotConverged; empty otherwise. FitBatch reuses its capacity.
	Coefficients []float64
	// Scale is the residual scale the program reported; meaningful only
	// when HasScale is true.
	Scale float64
	// HasScale reports whether the program reported a scale.
	HasScale bool
	// Iterations is the iteration count the program reported, 0 if none.
	Iterations int
	// Status says how the fit ended.
	Status Status
	// ProgramStatus is the program's own status word, "" if it gave none.
	ProgramStatus string
	// Err is a *FitError naming the estimator, the replicate and what went
	// wrong; nil exactly when Status is OK.
	Err error
}

// Process is a running outside estimator: the program of a Command,
// started once and kept running, fed one dataset per request line. A
// Process fits one request or batch at a time (FitBatch and Fit must not
// be called concurrently with each other); Close may be called from any
// goroutine, also while a fit runs. Use one Process per worker.
type Process struct {
	cmd     Command
	timeout time.Duration

	fitMu sync.Mutex // held by a fit, and by Close while it tears down

	mu     sync.Mutex // guards inc and closed
	inc    *incarnation
	closed bool

	starts   int
	stderrMu sync.Mutex // serialises the Processes' writes to cmd.Stderr
	stderrWG sync.WaitGroup

	wbuf   []byte  // encoded requests, the writer goroutine's during a batch
	line   []byte  // a reply line that crossed the reader's buffer
	sent   []int   // indices of the requests written, in order
	wire   wire    // the decoded reply
	single []Reply // Fit's batch of one
}

// incarnation is one run of the program.
type incarnation struct {
	cmd       *exec.Cmd
	stdin     *os.File // our end of its standard input
	stdout    *os.File // our end of its standard output
	reader    *bufio.Reader
	writeCh   chan writeJob // batches for the writer goroutine
	writeDone chan error    // the writer goroutine's result, one per batch
	exited    chan struct{}
	waitErr   error // cmd.Wait's result, set before exited is closed
	replied   bool  // a reply line has been read
	stopOnce  sync.Once
	stopErr   error
}

// Start starts the program of cmd and returns the Process that feeds it.
// It returns an error, naming the label, if cmd is invalid or the program
// cannot be started.
func Start(cmd Command) (*Process, error) {
	switch {
	case len(cmd.Args) == 0 || cmd.Args[0] == "":
		return nil, fmt.Errorf("external estimator %q: no program to run", cmd.Label)
	case cmd.Timeout < 0:
		return nil, fmt.Errorf("external estimator %q: timeout %v is negative", cmd.Label, cmd.Timeout)
	case cmd.StartTimeout < 0:
		return nil, fmt.Errorf("external estimator %q: start timeout %v is negative", cmd.Label, cmd.StartTimeout)
	}
	p := &Process{cmd: cmd, timeout: cmd.Timeout}
	if p.timeout == 0 {
		p.timeout = DefaultTimeout
	}
	if p.cmd.Stderr == nil {
		p.cmd.Stderr = io.Discard
	}
	if err := p.start(); err != nil {
		return nil, err
	}
	return p, nil
}

// Label returns the estimator's label.
func (p *Process) Label() string { return p.cmd.Label }

// Starts returns how many times the program was started: 1 plus the
// restarts after failures.
func (p *Process) Starts() int {
	p.fitMu.Lock()
	defer p.fitMu.Unlock()
	return p.starts
}

// start runs the program and makes it the current incarnation.
func (p *Process) start() error {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.closed {
		return errors.New("closed")
	}
	inc, err := p.launch()
	if err != nil {
		return fmt.Errorf("external estimator %q: starting %s: %w", p.cmd.Label, p.cmd.Args[0], err)
	}
	p.starts++
	p.inc = inc
	return nil
}

// launch starts the program with pipes of our own, so that no copying
// goroutines of os/exec stand between it and us and reads can time out.
func (p *Process) launch() (*incarnation, error) {
	c := exec.Command(p.cmd.Args[0], p.cmd.Args[1:]...)
	c.Dir = p.cmd.Dir
	var files []*os.File // every pipe end, closed on failure
	closeAll := func() {
		for _, f := range files {
			f.Close()
		}
	}
	pipe := func() (r, w *os.File, err error) {
		r, w, err = os.Pipe()
		if err == nil {
			files = append(files, r, w)
		}
		return r, w, err
	}
	inR, inW, err := pipe()
	if err != nil {
		return nil, err
	}
	outR, outW, err := pipe()
	if err != nil {
		closeAll()
		return nil, err
	}
	errR, errW, err := pipe()
	if err != nil {
		closeAll()
		return nil, err
	}
	c.Stdin, c.Stdout, c.Stderr = inR, outW, errW
	if err := c.Start(); err != nil {
		closeAll()
		return nil, err
	}
	// The child has its ends; ours must close so that EOF is seen.
	inR.Close()
	outW.Close()
	errW.Close()

	inc := &incarnation{
		cmd:       c,
		stdin:     inW,
		stdout:    outR,
		reader:    bufio.NewReaderSize(outR, 64<<10),
		writeCh:   make(chan writeJob),
		writeDone: make(chan error, 1),
		exited:    make(chan struct{}),
	}
	go func() {
		inc.waitErr = c.Wait()
		close(inc.exited)
	}()
	go inc.writer()
	p.stderrWG.Add(1)
	go func() {
		defer p.stderrWG.Done()
		copyLines(p.cmd.Stderr, &p.stderrMu, errR, "["+p.cmd.Label+"] ")
		errR.Close()
	}()
	return inc, nil
}

// writeJob is a batch for the writer goroutine: the requests reqs[i] for
// i in sent, to be encoded into *buf and written in that order.
type writeJob struct {
	reqs []Request
	sent []int
	buf  *[]byte
}

// flushBytes is the amount of encoded requests the writer goroutine
// gathers before it writes them, so that the program can start on the
// first requests of a batch while the later ones are encoded.
const flushBytes = 32 << 10

// writer encodes and writes each batch it is given, then reports the
// first write error (or nil) on writeDone. It ends when writeCh is closed.
func (inc *incarnation) writer() {
	for job := range inc.writeCh {
		b := (*job.buf)[:0]
		var err error
		for _, i := range job.sent {
			b, _ = appendRequest(b, &job.reqs[i]) // checked before
			if len(b) >= flushBytes {
				if _, err = inc.stdin.Write(b); err != nil {
					break
				}
				b = b[:0]
			}
		}
		if err == nil && len(b) > 0 {
			_, err = inc.stdin.Write(b)
		}
		*job.buf = b
		inc.writeDone <- err
	}
}

// stop ends an incarnation: by killing it, or (graceful) by closing its
// standard input and killing it only if it has not ended within
// closeGrace. It returns the program's exit error when it ended by itself.
func (inc *incarnation) stop(graceful bool) error {
	inc.stopOnce.Do(func() { inc.stopErr = inc.halt(graceful) })
	return inc.stopErr
}

// halt is stop's work, done once.
func (inc *incarnation) halt(graceful bool) error {
	inc.stdin.Close()
	close(inc.writeCh)
	var err error
	if graceful {
		t := time.NewTimer(closeGrace)
		select {
		case <-inc.exited:
			err = inc.waitErr
		case <-t.C:
			inc.cmd.Process.Kill()
			<-inc.exited
		}
		t.Stop()
	} else {
		inc.cmd.Process.Kill()
		<-inc.exited
	}
	inc.stdout.Close()
	return err
}

// Fit sends one request and waits for its reply. The reply's Coefficients
// are newly allocated; use FitBatch to reuse them.
func (p *Process) Fit(req Request) Reply {
	if p.single == nil {
		p.single = make([]Reply, 1)
	}
	p.single[0] = Reply{}
	p.FitBatch([]Request{req}, p.single)
	return p.single[0]
}

// FitBatch sends every request of reqs before reading the replies, in
// order, into out[i] (out must be at least as long as reqs), so that the
// program is never idle waiting for us. Each reply must come within the
// timeout of the previous one (or of the start of the batch), the first
// reply after a start within the timeout plus the start timeout. A failure
// ends only its own fit: when the program has to be restarted (BadReply,
// Timeout, Exited) the requests after the failed one are sent again to
// the new program. After the first fits, FitBatch allocates nothing
// unless a fit fails. It panics if out is shorter than reqs, a mistake of
// the caller's.
func (p *Process) FitBatch(reqs []Request, out []Reply) {
	if len(out) < len(reqs) {
		panic(fmt.Sprintf("external: FitBatch with %d replies for %d requests", len(out), len(reqs)))
	}
	p.fitMu.Lock()
	defer p.fitMu.Unlock()
	for next := 0; next < len(reqs); {
		if p.isClosed() {
			for i := next; i < len(reqs); i++ {
				p.failed(&reqs[i], &out[i], Closed, "the process was closed", nil)
			}
			return
		}
		if p.inc == nil {
			if err := p.start(); err != nil {
				p.failed(&reqs[next], &out[next], StartFailed, "cannot start the program again", errors.Unwrap(err))
				next++
				continue
			}
		}
		next = p.round(reqs, out, next)
	}
}

// round writes the requests from next on to the current incarnation and
// reads their replies. It returns the index of the first request still to
// do: len(reqs), or the one after a failure that stopped the program.
func (p *Process) round(reqs []Request, out []Reply, next int) int {
	inc := p.inc
	p.sent = p.sent[:0]
	for i := next; i < len(reqs); i++ {
		if msg := reqs[i].check(); msg != "" {
			p.failed(&reqs[i], &out[i], BadRequest, msg, nil)
			continue
		}
		p.sent = append(p.sent, i)
	}
	if len(p.sent) == 0 {
		return len(reqs)
	}
	// The writer encodes and writes while we read the replies, so
	// neither side waits on a full pipe and the program starts on the
	// first request as soon as it is encoded.
	inc.writeCh <- writeJob{reqs: reqs, sent: p.sent, buf: &p.wbuf}
	for _, i := range p.sent {
		st := p.receive(inc, &reqs[i], &out[i])
		if st.restarts() {
			<-inc.writeDone // the write has ended: stop closed the pipe
			return i + 1
		}
	}
	select {
	case <-inc.writeDone:
	default:
		// Every reply came, yet the program has not read all its input:
		// it answers without reading. Give it the timeout, then stop it.
		t := time.NewTimer(p.timeout)
		select {
		case <-inc.writeDone:
		case <-t.C:
			p.discard(inc)
			<-inc.writeDone
		}
		t.Stop()
	}
	return len(reqs)
}

// receive reads and checks the reply to req into out. When the status
// calls for it, it stops the incarnation.
func (p *Process) receive(inc *incarnation, req *Request, out *Reply) Status {
	line, err := p.readLine(inc)
	if err != nil {
		st, detail, cause := p.readFailure(inc, err)
		p.discard(inc)
		p.failed(req, out, st, detail, cause)
		return st
	}
	w := &p.wire
	if err := decodeReply(line, w); err != nil {
		p.discard(inc)
		p.failed(req, out, BadReply, err.Error()+": "+quote(line), nil)
		return BadReply
	}
	_, cols := req.X.Dims()
	out.ProgramStatus = w.status
	switch {
	case w.hasErr:
		p.failed(req, out, ProgramError, "the program said: "+w.errMsg, nil)
		return ProgramError
	case !w.hasCoefs:
		p.discard(inc)
		p.failed(req, out, BadReply, "no coefficients in the reply: "+quote(line), nil)
		return BadReply
	case len(w.coefs) != cols:
		p.failed(req, out, WrongLength, fmt.Sprintf("%d coefficients for %d columns", len(w.coefs), cols), nil)
		return WrongLength
	case w.badCoef >= 0:
		p.failed(req, out, NonFinite, fmt.Sprintf("coefficient %d (%s) is %v", w.badCoef+1, req.Names[w.badCoef], w.coefs[w.badCoef]), nil)
		return NonFinite
	case w.badScale:
		p.failed(req, out, NonFinite, fmt.Sprintf("the scale is %v", w.scale), nil)
		return NonFinite
	}
	out.Coefficients = append(out.Coefficients[:0], w.coefs...)
	out.Scale, out.HasScale = w.scale, w.hasScale
	out.Iterations = w.iterations
	out.Status, out.Err = OK, nil
	if !w.converged {
		out.Status = NotConverged
		detail := "the program reported no convergence"
		if w.status != "" {
			detail += " (status " + w.status + ")"
		}
		out.Err = &FitError{Label: p.cmd.Label, Replicate: req.Replicate, Status: NotConverged, Detail: detail}
	}
	return out.Status
}

// readLine reads one reply line, without its line end, waiting at most
// the timeout. The slice is valid until the next read.
func (p *Process) readLine(inc *incarnation) ([]byte, error) {
	if err := inc.stdout.SetReadDeadline(time.Now().Add(p.wait(inc))); err != nil {
		return nil, err
	}
	frag, err := inc.reader.ReadSlice('\n')
	if err == nil {
		inc.replied = true
		return frag[:len(frag)-1], nil
	}
	p.line = append(p.line[:0], frag...)
	for err == bufio.ErrBufferFull {
		if len(p.line) > MaxReplyBytes {
			return nil, errTooLong{}
		}
		frag, err = inc.reader.ReadSlice('\n')
		p.line = append(p.line, frag...)
	}
	if err != nil {
		return nil, err
	}
	inc.replied = true
	return p.line[:len(p.line)-1], nil
}

// wait returns how long inc has for its next reply: the timeout, plus the
// start timeout before its first reply.
func (p *Process) wait(inc *incarnation) time.Duration {
	if inc.replied {
		return p.timeout
	}
	return p.timeout + p.cmd.StartTimeout
}

// errTooLong is the read error of a reply longer than MaxReplyBytes.
type errTooLong struct{}

func (errTooLong) Error() string { return fmt.Sprintf("reply longer than %d bytes", MaxReplyBytes) }

// readFailure classifies a read error.
func (p *Process) readFailure(inc *incarnation, err error) (Status, string, error) {
	switch {
	case p.isClosed():
		return Closed, "the process was closed", nil
	case errors.Is(err, os.ErrDeadlineExceeded):
		return Timeout, fmt.Sprintf("no reply within %v", p.wait(inc)), nil
	case errors.As(err, new(errTooLong)):
		return BadReply, err.Error(), nil
	case err == io.EOF:
		t := time.NewTimer(min(p.timeout, closeGrace))
		defer t.Stop()
		select {
		case <-inc.exited:
			if inc.waitErr != nil {
				return Exited, "the program ended before replying", inc.waitErr
			}
			return Exited, "the program ended before replying (exit status 0)", nil
		case <-t.C:
			return Exited, "the program closed its standard output", nil
		}
	}
	return Exited, "cannot read the reply", err
}

// discard kills the incarnation inc after a failure; the next request
// starts the program again.
func (p *Process) discard(inc *incarnation) {
	p.mu.Lock()
	if p.inc == inc {
		p.inc = nil
	}
	p.mu.Unlock()
	inc.stop(false)
}

// failed fills out for a fit that failed with status st.
func (p *Process) failed(req *Request, out *Reply, st Status, detail string, cause error) {
	out.Coefficients = out.Coefficients[:0]
	out.Scale, out.HasScale, out.Iterations = 0, false, 0
	if st != ProgramError {
		out.ProgramStatus = ""
	}
	out.Status = st
	out.Err = &FitError{Label: p.cmd.Label, Replicate: req.Replicate, Status: st, Detail: detail, Err: cause}
}

// isClosed reports whether Close has been called.
func (p *Process) isClosed() bool {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.closed
}

// Close stops the program: it closes the program's standard input, which
// asks it to end, and kills it if it has not ended within five seconds.
// Called while a fit runs (from another goroutine, to cancel a run), it
// kills the program at once; the fits not done end with status Closed.
// Close waits (at most five seconds) until the program's standard error
// has been copied. It returns the program's exit error if it ended by
// itself with one. Closing twice does nothing.
func (p *Process) Close() error {
	p.mu.Lock()
	if p.closed {
		p.mu.Unlock()
		return nil
	}
	p.closed = true
	inc := p.inc
	p.mu.Unlock()
	if !p.fitMu.TryLock() {
		if inc != nil {
			inc.cmd.Process.Kill()
		}
		p.fitMu.Lock()
	}
	defer p.fitMu.Unlock()
	var err error
	if p.inc != nil {
		if e := p.inc.stop(true); e != nil {
			err = fmt.Errorf("external estimator %q: program ended with %w", p.cmd.Label, e)
		}
		p.inc = nil
	}
	done := make(chan struct{})
	go func() {
		p.stderrWG.Wait()
		close(done)
	}()
	t := time.NewTimer(closeGrace)
	defer t.Stop()
	select {
	case <-done:
	case <-t.C:
	}
	return err
}

// quote returns line for a message, shortened to 200 bytes.
func quote(line []byte) string {
	const most = 200
	if len(line) > most {
		return fmt.Sprintf("%q…", line[:most])
	}
	return fmt.Sprintf("%q", line)
}
