package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"os/signal"
	"syscall"
	"time"

	"github.com/cleave-seg/cleave/imageio"
)

// signalGrace is how long a command may take to stop after the first
// SIGINT or SIGTERM before the process stops it: every long loop checks
// the context, so an orderly stop normally takes far less; the grace
// bounds the few stages that do not (an image encode, a decode already
// under way), so that a run always ends within 5 s of the signal, as
// cluster schedulers and service managers expect.
const signalGrace = 3 * time.Second

// signalExit is the exit status for a run ended by sig: 128 + the signal
// number (130 for SIGINT, 143 for SIGTERM), the shell's convention.
func signalExit(sig os.Signal) int {
	if s, ok := sig.(syscall.Signal); ok {
		return 128 + int(s)
	}
	return 128 + int(syscall.SIGINT)
}

// runWithSignals runs cmd with a context that the first SIGINT or SIGTERM
// cancels: the command stops at its next check, writes nothing half-way
// (outputs are renamed into place only when complete) and returns. A
// second signal, or the first one's grace running out, exits at once:
// the temporary files of writes still under way are removed and the
// status is 128 + the signal number. When the command returns after a
// signal with a failure, the status is also 128 + the signal number, so
// that a script or a scheduler sees the run as interrupted.
func runWithSignals(cmd func(ctx context.Context) int, stderr io.Writer, exit func(int)) int {
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	sigs := make(chan os.Signal, 2)
	signal.Notify(sigs, os.Interrupt, syscall.SIGTERM)
	defer signal.Stop(sigs)
	first := make(chan os.Signal, 1)
	done := make(chan struct{})
	defer close(done)
	go func() {
		var sig os.Signal
		select {
		case sig = <-sigs:
		case <-done:
			return
		}
		first <- sig
		cancel()
		grace := time.NewTimer(signalGrace)
		defer grace.Stop()
		select {
		case again := <-sigs:
			fmt.Fprintf(stderr, "cleave: second %s: stopping now\n", signalName(again))
			imageio.RemovePendingWrites()
			exit(signalExit(again))
		case <-grace.C:
			fmt.Fprintf(stderr, "cleave: still running %v after %s: stopping now\n", signalGrace, signalName(sig))
			imageio.RemovePendingWrites()
			exit(signalExit(sig))
		case <-done:
		}
	}()
	code := cmd(ctx)
	select {
	case sig := <-first:
		if code != exitOK {
			return signalExit(sig)
		}
	default:
	}
	return code
}

// signalName is the conventional name of the signals cleave handles.
func signalName(sig os.Signal) string {
	switch sig {
	case os.Interrupt:
		return "SIGINT"
	case syscall.SIGTERM:
		return "SIGTERM"
	}
	return sig.String()
}
