package main

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"net/http"
	"time"

	"ebb/demo"
	"ebb/internal/analysis"
	"ebb/internal/problem"
	"ebb/internal/store"
	"ebb/web"
)

// demoDataset is the name under which --demo loads the demo business.
const demoDataset = "demo"

func serveCommand() command {
	return command{
		name:    "serve",
		summary: "start the web dashboard",
		detail: `
Serves the dashboard over HTTP. The database file is created and migrated on
first start. With --demo, the invented demo business is imported as the
dataset "demo" unless it exists already, so a second start changes nothing.
Put ebb behind a TLS-terminating proxy before exposing it beyond this
machine.`,
		setup: func(f *flags) func(context.Context, env, []string) error {
			var addr, db string
			var withDemo bool
			f.String(&addr, "addr", "127.0.0.1:8080", "HOST:PORT", "address to listen on")
			f.String(&db, "db", "ebb.db", "FILE", "SQLite database file")
			f.Bool(&withDemo, "demo", "load the demo dataset if the database has none called \"demo\"")
			return func(ctx context.Context, e env, args []string) error {
				if len(args) > 0 {
					return fmt.Errorf("serve: unexpected argument %q", args[0])
				}
				log := slog.New(slog.NewTextHandler(e.stderr, nil))
				log.Info("starting", "addr", addr, "db", db, "demo", withDemo)
				st, err := store.Open(ctx, db, store.Options{})
				if err != nil {
					return err
				}
				defer st.Close()
				if withDemo {
					if err := loadDemo(ctx, e, st); err != nil {
						return err
					}
				}
				srv := web.New(st, log)
				ln, err := net.Listen("tcp", addr)
				if err != nil {
					return fmt.Errorf("serve: %w", err)
				}
				fmt.Fprintf(e.stdout, "ebb is serving http://%s/ (database %s); press Ctrl+C to stop\n", ln.Addr(), db)
				return serveHTTP(ctx, ln, srv, log)
			}
		},
	}
}

// serveHTTP runs the server until ctx ends, then shuts it down gracefully.
func serveHTTP(ctx context.Context, ln net.Listener, h http.Handler, log *slog.Logger) error {
	hs := &http.Server{
		Handler:           h,
		ReadHeaderTimeout: 10 * time.Second,
		IdleTimeout:       2 * time.Minute,
		ErrorLog:          slog.NewLogLogger(log.Handler(), slog.LevelWarn),
	}
	done := make(chan error, 1)
	go func() { done <- hs.Serve(ln) }()
	select {
	case err := <-done:
		return fmt.Errorf("serve: %w", err)
	case <-ctx.Done():
	}
	log.Info("shutting down")
	shut, cancel := context.WithTimeout(context.Background(), 10*time.Second)
	defer cancel()
	if err := hs.Shutdown(shut); err != nil {
		return fmt.Errorf("serve: shutdown: %w", err)
	}
	if err := <-done; err != nil && !errors.Is(err, http.ErrServerClosed) {
		return fmt.Errorf("serve: %w", err)
	}
	return nil
}

// loadDemo imports the demo business unless a dataset called "demo" exists.
func loadDemo(ctx context.Context, e env, st *store.Store) error {
	if _, err := st.DatasetByName(ctx, demoDataset); err == nil {
		fmt.Fprintf(e.stdout, "the demo dataset is already loaded\n")
		return nil
	} else if !problem.Is(err, problem.NotFound) {
		return err
	}
	b := demo.Generate(demo.Options{})
	var orders, customers bytes.Buffer
	if err := b.WriteOrders(&orders); err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	if err := b.WriteCustomers(&customers); err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	res, err := analysis.Import(ctx, st, analysis.ImportRequest{
		Dataset:   demoDataset,
		Orders:    analysis.Source{Name: demo.OrdersFile, R: &orders},
		Customers: &analysis.Source{Name: demo.CustomersFile, R: &customers},
		Now:       e.now(),
	})
	if err != nil {
		return fmt.Errorf("load the demo dataset: %w", err)
	}
	fmt.Fprintf(e.stdout, "loaded the demo dataset (the invented shop Larkspur Refills): %d orders, %d customers\n",
		res.Orders.Accepted, res.Customers.Accepted)
	return nil
}
