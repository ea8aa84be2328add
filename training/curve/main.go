// Command curve draws the loss-curve PNG of a training log, as finetune
// does beside its weights:
//
//	go run ./training/curve training/default/log.csv training/default/loss.png
//
// The log is the CSV that finetune writes (-log); see train.StepLog.Chart
// for what the picture shows.
package main

import (
	"errors"
	"fmt"
	"os"

	"github.com/parallaxdepth/parallax/model/train"
)

func main() {
	if err := run(os.Args[1:]); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func run(args []string) error {
	if len(args) != 2 {
		return errors.New("usage: curve LOG.csv OUT.png")
	}
	return train.PlotLog(args[0], args[1])
}
