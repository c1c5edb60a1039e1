package main

import (
	"context"
	"fmt"
	"net"
	"net/http"
	"time"
)

func healthCommand() command {
	return command{
		name:    "health",
		summary: "check that a running ebb answers (for container health checks)",
		detail: `
Asks http://ADDR/healthz and exits 0 when it answers 200 within 3 seconds.
An address that listens on all interfaces (0.0.0.0 or [::]) is asked on
127.0.0.1.`,
		setup: func(f *flags) func(context.Context, env, []string) error {
			var addr string
			f.String(&addr, "addr", "127.0.0.1:8080", "HOST:PORT", "address the server listens on")
			return func(ctx context.Context, e env, args []string) error {
				host, port, err := net.SplitHostPort(addr)
				if err != nil {
					return fmt.Errorf("health: --addr %q: %w", addr, err)
				}
				if host == "" || host == "0.0.0.0" || host == "::" {
					host = "127.0.0.1"
				}
				ctx, cancel := context.WithTimeout(ctx, 3*time.Second)
				defer cancel()
				req, err := http.NewRequestWithContext(ctx, http.MethodGet, "http://"+net.JoinHostPort(host, port)+"/healthz", nil)
				if err != nil {
					return fmt.Errorf("health: %w", err)
				}
				res, err := http.DefaultClient.Do(req)
				if err != nil {
					return fmt.Errorf("health: %w", err)
				}
				res.Body.Close()
				if res.StatusCode != http.StatusOK {
					return fmt.Errorf("health: /healthz answered %s", res.Status)
				}
				fmt.Fprintln(e.stdout, "ok")
				return nil
			}
		},
	}
}
