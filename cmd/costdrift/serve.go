package main

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"net/http"
	"time"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/sqlite"
	"github.com/costdrift/costdrift/internal/web"
)

// defaultServeAddress is where `costdrift serve` listens when neither
// --listen nor http.listen says: loopback, on the daemon's usual port.
const defaultServeAddress = "127.0.0.1:9464"

func (a *app) serveCommand() *cobra.Command {
	var listen string
	cmd := &cobra.Command{
		Use:   "serve",
		Short: "Serve the web view of the store, without the schedule",
		Long: `serve opens the store and serves the web view: the overview, the objects
and each object's formula, charts and evidence (README "The web view"). It
runs no cycle; ` + "`costdrift run`" + ` serves the same pages at http.listen beside
/healthz and /metrics.

It listens on loopback (--listen, else http.listen, else ` + defaultServeAddress + `) and
answers this machine only, recording decisions under your user name. With
http.users_file, users sign in with a name and password kept by
` + "`costdrift users add`" + `. To listen beyond this machine, set
http.allow_remote: true and http.users_file, or http.auth_header to the
header a trusted reverse proxy sets to the signed-in user; with neither it
refuses to start.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			e, err := a.loadConfig()
			if err != nil {
				return err
			}
			if listen == "" {
				listen = e.Config.HTTP.Listen
			}
			if listen == "" {
				listen = defaultServeAddress
			}
			if err := checkListen(listen, e.Config.HTTP.AllowRemote, e.Config.HTTP.AuthHeader, e.Config.HTTP.UsersFile); err != nil {
				return err
			}
			ctx := cmd.Context()
			db, err := e.OpenToRead(ctx, true)
			if err != nil {
				return err
			}
			defer db.Close()
			v, err := newView(e, func() *pipeline.Env { return e }, db, slog.New(slog.NewTextHandler(a.errw, nil)))
			if err != nil {
				return err
			}
			ln, err := net.Listen("tcp", listen)
			if err != nil {
				return fmt.Errorf("serve %s: %w", listen, err)
			}
			srv := &http.Server{Handler: v.Handler(), ReadHeaderTimeout: 5 * time.Second}
			fmt.Fprintf(a.out, "costdrift web view: open http://%s/ (Ctrl-C stops it)\n", ln.Addr())
			done := make(chan error, 1)
			go func() { done <- srv.Serve(ln) }()
			select {
			case err := <-done:
				return fmt.Errorf("serve: %w", err)
			case <-ctx.Done():
			}
			shut, cancel := context.WithTimeout(context.Background(), 5*time.Second)
			defer cancel()
			if err := srv.Shutdown(shut); err != nil && !errors.Is(err, http.ErrServerClosed) {
				return fmt.Errorf("serve: %w", err)
			}
			return nil
		},
	}
	cmd.Flags().StringVar(&listen, "listen", "", "host:port to listen on (default http.listen, else "+defaultServeAddress+")")
	return cmd
}

// checkListen keeps the view on loopback unless http.allow_remote says
// otherwise, and then only with authentication.
func checkListen(listen string, allowRemote bool, authHeader, usersFile string) error {
	host, _, err := net.SplitHostPort(listen)
	if err != nil {
		return fmt.Errorf("listen: must be host:port such as %s, not %q", defaultServeAddress, listen)
	}
	ip := net.ParseIP(host)
	loopback := host == "localhost" || (ip != nil && ip.IsLoopback())
	if !loopback && !allowRemote {
		return fmt.Errorf("listen: %q is not a loopback address; set http.allow_remote: true (with http.users_file or http.auth_header) to listen beyond this machine", listen)
	}
	return web.CheckRemote(allowRemote, authHeader, usersFile)
}

// newView builds the web view of db; with neither a users file nor a
// proxy's header, a loopback client's decisions are recorded under the
// operating-system user.
func newView(e *pipeline.Env, env func() *pipeline.Env, db *sqlite.DB, log *slog.Logger) (*web.Server, error) {
	opt := web.Options{AuthHeader: e.Config.HTTP.AuthHeader, UsersFile: e.Config.Path(e.Config.HTTP.UsersFile), Log: log}
	if opt.AuthHeader == "" && opt.UsersFile == "" {
		who, err := decider("")
		if err != nil {
			return nil, err
		}
		opt.LocalUser = who
	}
	return web.New(env, db, opt)
}
