// Package progress reports how far a long job has come, the same way in
// every command: on a terminal it redraws one line in place,
//
//	[=========>          ]  46/100  46%  1.9 pairs/s  ETA 28s  loss 0.1834
//
// and anywhere else (a file, a pipe, a CI log) it prints one plain line per
// interval and never writes a carriage return or an escape sequence, so a
// log reads line by line.
//
// The rate is an exponential moving average of the rate between updates,
// started after a warm-up (the first updates of a job include set-up work
// and would make the first ETA far too long); until then the ETA is shown
// as "?". A Reporter is not safe for concurrent use.
package progress
