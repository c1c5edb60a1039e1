// Command ebb is a self-hosted churn-analytics dashboard: it imports order
// histories, derives a churn window, trains and evaluates models, and
// publishes weekly at-risk lists. Run "ebb help" for the subcommands.
package main

import (
	"context"
	"fmt"
	"os"
	"os/signal"
	"syscall"
	_ "time/tzdata" // time zones work even on images without /usr/share/zoneinfo
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	if err := run(ctx, os.Args[1:], os.Getenv, os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, "ebb:", err)
		os.Exit(1)
	}
}
