package main

import (
	"sync"

	"context"
	"encoding/hex"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"strconv"
	"time"

	"ebb/demo"
	"ebb/demo/replay"
	"ebb/internal/analysis"
	"ebb/internal/auth"
	"ebb/internal/civil"
	"ebb/internal/history"
	"ebb/internal/jobs"
	"ebb/internal/problem"
	"ebb/internal/store"
	"ebb/web"
)

// demoDataset is the name under which --demo loads the demo business.
const demoDataset = "demo"

// Demo users created by --demo; their passwords derive from the session key.
var demoUsers = []struct {
	name string
	role auth.Role
}{{"demo-analyst", auth.Analyst}, {"demo-viewer", auth.Viewer}}

type serveOptions struct {
	addr, db, uploads, sessionKey string
	maxUploadMiB                  int
	idle, absolute                time.Duration
	behindTLS, demo               bool
	workers                       int
}

func serveCommand() command {
	return command{
		name:    "serve",
		summary: "start the web dashboard",
		detail: `
Serves the dashboard over HTTP. The database file is created and migrated on
first start. When there are no users yet, ebb prints a one-time link that
creates the first administrator. With --demo, the invented demo business is
imported as the dataset "demo" unless it exists already (a second start
changes nothing), and a demo analyst and a demo viewer are created; their
passwords are printed at every start.
Put ebb behind a TLS-terminating proxy (and pass --behind-tls-proxy) before
exposing it beyond this machine.`,
		setup: func(f *flags) func(context.Context, env, []string) error {
			var o serveOptions
			var idle, absolute string
			f.String(&o.addr, "addr", "127.0.0.1:8080", "HOST:PORT", "address to listen on")
			f.String(&o.db, "db", "ebb.db", "FILE", "SQLite database file")
			f.Bool(&o.demo, "demo", "load the demo dataset if the database has none called \"demo\", and create demo users")
			f.String(&o.uploads, "uploads", "", "DIR", "folder for uploaded files waiting for import (default: DB file name + .uploads)")
			f.Int(&o.maxUploadMiB, "max-upload", 1024, "MiB", "largest upload accepted, in MiB")
			f.String(&o.sessionKey, "session-key", "", "HEX", "session signing key, 64 or 128 hex digits (default: generated on first start and kept in the database)")
			f.String(&idle, "session-idle", "8h", "DURATION", "a session unused this long ends (e.g. 30m, 8h)")
			f.String(&absolute, "session-max", "168h", "DURATION", "a session ends this long after sign-in")
			f.Bool(&o.behindTLS, "behind-tls-proxy", "mark cookies Secure because a TLS proxy serves ebb over HTTPS")
			f.Int(&o.workers, "workers", 2, "N", "jobs that may run at the same time")
			return func(ctx context.Context, e env, args []string) error {
				if len(args) > 0 {
					return fmt.Errorf("serve: unexpected argument %q", args[0])
				}
				var err error
				if o.idle, err = time.ParseDuration(idle); err != nil || o.idle <= 0 {
					return fmt.Errorf("serve: --session-idle %q is not a duration such as 8h", idle)
				}
				if o.absolute, err = time.ParseDuration(absolute); err != nil || o.absolute <= 0 {
					return fmt.Errorf("serve: --session-max %q is not a duration such as 168h", absolute)
				}
				if o.maxUploadMiB < 1 {
					return fmt.Errorf("serve: --max-upload must be at least 1 MiB")
				}
				if o.workers < 1 || o.workers > 16 {
					return fmt.Errorf("serve: --workers must be 1 to 16")
				}
				if o.uploads == "" {
					o.uploads = o.db + ".uploads"
				}
				return serve(ctx, e, o)
			}
		},
	}
}

func serve(ctx context.Context, e env, o serveOptions) error {
	log := slog.New(slog.NewTextHandler(e.stderr, nil))
	masked := "generated"
	if o.sessionKey != "" {
		masked = "given (hidden)"
	}
	log.Info("starting", "addr", o.addr, "db", o.db, "uploads", o.uploads, "demo", o.demo, "session_key", masked,
		"session_idle", o.idle, "session_max", o.absolute, "behind_tls_proxy", o.behindTLS, "max_upload_mib", o.maxUploadMiB)

	var key []byte
	if o.sessionKey != "" {
		k, err := auth.ParseKey(o.sessionKey)
		if err != nil {
			return fmt.Errorf("serve: --session-key: %w", err)
		}
		key = k
	}
	if err := os.MkdirAll(o.uploads, 0o700); err != nil {
		return fmt.Errorf("serve: uploads folder: %w", err)
	}
	st, err := store.Open(ctx, o.db, store.Options{})
	if err != nil {
		return err
	}
	defer st.Close()
	if key == nil {
		if key, err = storedSessionKey(ctx, st); err != nil {
			return err
		}
	}
	now := e.now
	sessions, err := auth.NewSessions(st, key, now)
	if err != nil {
		return err
	}
	sessions.Idle, sessions.Absolute, sessions.Secure = o.idle, o.absolute, o.behindTLS
	if n, err := st.DeleteExpiredSessions(ctx, now(), now().Add(-o.idle)); err != nil {
		return err
	} else if n > 0 {
		log.Info("expired sessions removed", "count", n)
	}
	cleanUploads(ctx, st, now().Add(-7*24*time.Hour), log)
	accounts := &auth.Accounts{Store: st, Hasher: auth.Hasher{}, Throttle: auth.NewThrottle(now), Now: now}

	runner := jobs.New(st, jobs.Options{Workers: o.workers, Now: now, Log: log})
	histories := history.NewCache(2)
	runner.Register(analysis.KindImport, analysis.ImportJob(st, now))
	runner.Register(analysis.KindWindow, analysis.WindowJob(st, histories, now))
	runner.Register(analysis.KindTrain, analysis.TrainJob(st, histories, now, func(dataset string) analysis.TruthFunc {
		if !o.demo || dataset != demoDataset {
			return nil
		}
		return demoTruth()
	}))
	runner.Register(analysis.KindScore, analysis.ScoreJob(st, histories, now))
	runner.Register(analysis.KindScheduledList, analysis.ScheduledListJob(st, histories, now))
	runner.Register(analysis.KindMeasure, analysis.MeasureJob(st, histories, now))
	if n, err := runner.Start(ctx); err != nil {
		return err
	} else if n > 0 {
		log.Info("jobs left running by the last stop are marked interrupted; re-run them from their page", "count", n)
	}
	defer runner.Stop()

	if o.demo {
		if err := loadDemo(ctx, e, st); err != nil {
			return err
		}
	}
	ln, err := net.Listen("tcp", o.addr)
	if err != nil {
		return fmt.Errorf("serve: %w", err)
	}
	base := "http://" + ln.Addr().String()
	if o.demo {
		if err := demoAccounts(ctx, e, st, accounts, key); err != nil {
			return err
		}
	}
	if err := setupLink(ctx, e, st, base); err != nil {
		return err
	}
	tokens := &auth.Tokens{Store: st, Now: now}
	srv := web.New(st, accounts, sessions, tokens, runner, log, web.Config{UploadDir: o.uploads, MaxUpload: int64(o.maxUploadMiB) << 20, Now: now})
	go runSchedules(ctx, st, runner, now, log)
	fmt.Fprintf(e.stdout, "ebb is serving %s/ (database %s); press Ctrl+C to stop\n", base, o.db)
	return serveHTTP(ctx, ln, srv, log)
}

// runSchedules queues the weekly list runs that are due: at start (so a
// slot missed while the server was down runs once now) and every half
// minute after.
func runSchedules(ctx context.Context, st *store.Store, q analysis.Submitter, now func() time.Time, log *slog.Logger) {
	tick := time.NewTicker(30 * time.Second)
	defer tick.Stop()
	for {
		if n, err := analysis.RunDueSchedules(ctx, st, q, now(), 10*time.Minute); err != nil {
			if ctx.Err() != nil {
				return
			}
			log.Error("scheduled lists", "err", err)
		} else if n > 0 {
			log.Info("scheduled lists queued", "count", n)
		}
		select {
		case <-ctx.Done():
			return
		case <-tick.C:
		}
	}
}

const settingSessionKey = "session_key"

// storedSessionKey returns the installation's session key, generating and
// storing one on first start.
func storedSessionKey(ctx context.Context, st *store.Store) ([]byte, error) {
	v, err := st.InitSetting(ctx, settingSessionKey, hex.EncodeToString(auth.NewKey()))
	if err != nil {
		return nil, err
	}
	k, err := auth.ParseKey(v)
	if err != nil {
		return nil, fmt.Errorf("stored session key: %w", err)
	}
	return k, nil
}

// setupLink prints a one-time link that creates an administrator, while
// there is none.
func setupLink(ctx context.Context, e env, st *store.Store, base string) error {
	users, err := st.Users(ctx)
	if err != nil {
		return err
	}
	for _, u := range users {
		if u.Role == auth.Admin && !u.Disabled {
			return nil
		}
	}
	nonce := auth.NewKey()[:16]
	token, err := st.InitSetting(ctx, web.SettingSetupToken, auth.SetupToken(nonce))
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "no administrator yet: create one at %s/setup/%s (the link works once)\n", base, token)
	return nil
}

// demoAccounts creates the demo users if missing and prints how to sign in.
func demoAccounts(ctx context.Context, e env, st *store.Store, accounts *auth.Accounts, key []byte) error {
	for _, d := range demoUsers {
		pw := auth.DemoPassword(key, d.name)
		if _, _, err := st.UserByName(ctx, d.name); problem.Is(err, problem.NotFound) {
			if _, err := accounts.Create(ctx, d.name, d.role, pw); err != nil {
				return fmt.Errorf("create demo user %s: %w", d.name, err)
			}
		} else if err != nil {
			return err
		}
		fmt.Fprintf(e.stdout, "demo %s: sign in as %s with password %s\n", d.role, d.name, pw)
	}
	return nil
}

// cleanUploads removes uploads older than before, with their files.
func cleanUploads(ctx context.Context, st *store.Store, before time.Time, log *slog.Logger) {
	dirs, err := st.DeleteUploadsBefore(ctx, before)
	if err != nil {
		log.Warn("clean old uploads", "err", err)
		return
	}
	for _, d := range dirs {
		if err := os.RemoveAll(filepath.Clean(d)); err != nil {
			log.Warn("remove old upload", "dir", d, "err", err)
		}
	}
	if len(dirs) > 0 {
		log.Info("old uploads removed", "count", strconv.Itoa(len(dirs)))
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

// demoTruth gives the demo business's true probabilities, so the models
// page can show how close each model gets to what no model can reach.
var demoTruth = sync.OnceValue(func() analysis.TruthFunc {
	truth := demo.Generate(demo.Options{}).Truth()
	return func(key string, day civil.Date, horizonDays int) float64 { return truth(key, day.Time(), horizonDays) }
})

// loadDemo imports the demo business unless a dataset called "demo" exists.
func loadDemo(ctx context.Context, e env, st *store.Store) error {
	if _, err := st.DatasetByName(ctx, demoDataset); err == nil {
		fmt.Fprintf(e.stdout, "the demo dataset is already loaded\n")
		return nil
	} else if !problem.Is(err, problem.NotFound) {
		return err
	}
	h, err := replay.Load(ctx, st, demo.Generate(demo.Options{}), e.now())
	if err != nil {
		return fmt.Errorf("load the demo dataset: %w", err)
	}
	d, err := st.DatasetByID(ctx, h.DatasetID)
	if err != nil {
		return err
	}
	fmt.Fprintf(e.stdout, "loaded the demo dataset (the invented shop Larkspur Refills): %d orders, %d customers, %d weekly lists already published\n",
		d.Orders, d.Customers, len(h.Lists))
	return nil
}
