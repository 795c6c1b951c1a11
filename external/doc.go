// Package external fits regression estimators that live outside rhomark,
// in any language, through a line protocol over a program's standard input
// and output.
//
// # Running the program
//
// A Command names the program (Args, started directly, with no shell), its
// working directory (Dir; for a scenario, the scenario file's folder), a
// Label, a per-reply Timeout (DefaultTimeout, 60 s, when zero) and a
// StartTimeout, extra time for the first reply after each start. Start
// runs it once; the Process then keeps it running and sends it one request
// per dataset. Each worker of a run has its own Process, so a program
// never sees two requests at once and needs no locking of its own.
//
// Each line the program writes to its standard error is copied to
// Command.Stderr, prefixed by "[label] ".
//
// # Requests
//
// A request is one JSON object on one line (ended by "\n", with no other
// newline inside), written to the program's standard input. Its fields,
// always in this order, are:
//
//	replicate  integer  the replicate's index, for the program's own messages only;
//	                    a fit must not depend on it
//	seed       integer  an unsigned 64-bit seed (0 … 18446744073709551615) the
//	                    program may use for its own randomness, so that its fits
//	                    can be reproduced; readers that hold numbers as float64
//	                    see it rounded
//	names      array    the p coefficient names, strings, in column order
//	y          array    the n responses, numbers
//	x          array    the n×p design as n rows of p numbers; the first column
//	                    is all ones when the model has an intercept
//
// Numbers are written in the shortest form that reads back to the same
// float64 (as 1.5, -0.0625, 1e-07 or 1.2345e+06), so x and y reach the
// program exactly; they are always finite. A program must ignore fields it
// does not know: later versions may add some.
//
// Example, n = 2, p = 2:
//
//	{"replicate":17,"seed":9001,"names":["(intercept)","volume"],"y":[10.2,19.9],"x":[[1,10],[1,20]]}
//
// # Replies
//
// For each request, in order, the program writes one JSON object on one
// line to its standard output and flushes it. Its fields:
//
//	coefficients  array    p finite numbers, in the order of names; required
//	                       unless error is given
//	scale         number   the residual scale, finite and ≥ 0; optional
//	iterations    integer  the iterations taken, ≥ 0; optional
//	converged     boolean  false marks the fit as failed with status
//	                       not-converged (its coefficients are kept); default true
//	status        string   a short word of the program's own for how the fit
//	                       ended (such as "converged" or "iteration-limit");
//	                       optional, reported with the fit
//	error         string   a message: the fit failed (status program-error);
//	                       the other fields are then ignored
//
// Field names are matched exactly as written here (JSON keys are
// case-sensitive: "Coefficients" is another field). Other fields are
// ignored, and null counts as absent (except inside coefficients, where it
// is a missing value). Example:
//
//	{"coefficients":[0.31,0.987],"scale":0.42,"iterations":9,"status":"converged"}
//
// NaN, Infinity and -Infinity, which some JSON writers print although JSON
// has no such numbers, are read, and so are the strings "NaN", "NA",
// "Inf", "-Inf", "Infinity" and "-Infinity" and numbers too large for a
// float64: in coefficients or scale they fail the fit with status
// non-finite, never a silent NaN.
//
// The program reads requests until its standard input ends, then exits.
// Nothing else may be written to standard output: debugging output goes
// to standard error.
//
// # Batches
//
// FitBatch writes a batch of requests before it reads the replies, so that
// the program works while rhomark waits; a program that reads one line,
// answers it and flushes needs nothing special for this. Requests are
// encoded and written on a goroutine of their own, in pieces of about
// 32 KiB, while the replies are read: neither side blocks on a full pipe,
// and the program starts on the first request while later ones are still
// being encoded.
//
// # Failures
//
// Every failure ends only its own fit, with a Status and a *FitError that
// names the label and the replicate; the other fits of the batch go on.
// A reply that is not a JSON object of the protocol (BadReply), no reply
// within the timeout (Timeout) and a program that ends or closes its
// standard output (Exited) stop the program; the requests after the failed
// one are sent to a new run of it. Wrong lengths, non-finite values,
// errors and non-convergence are well-formed replies and keep the program
// running. A program that leaves a child holding its standard output open
// after it ends is seen as silent and ends in Timeout.
//
// # Speed
//
// Requests are encoded by appending to a reused buffer with
// strconv.AppendFloat, and replies are decoded by a small parser into a
// reused value; after the first fits a batch allocates nothing unless a
// fit fails. BenchmarkRoundTrip measures the time per fit.
package external
