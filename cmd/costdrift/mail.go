package main

import (
	"fmt"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// alertsMailCommand is the alerts command with the mail subcommands.
func (a *app) alertsMailCommand() *cobra.Command {
	cmd := a.alertsCommand()
	cmd.AddCommand(a.alertsSendCommand(), a.alertsTestEmailCommand())
	return cmd
}

func (a *app) alertsSendCommand() *cobra.Command {
	return &cobra.Command{
		Use:   "send",
		Short: "Mail the open alerts that are due, as after an analysis",
		Long: `send runs the delivery step of a cycle: each recipient of alerts.recipients gets
one message with the open alerts routed to it that it has not had yet, that
escalated since, or whose delivery failed and is due for a retry. With no
mail.smtp.host the messages are written to the mail.outbox folder.

A digest the server did not take stays queued and is retried after the
backoff; send then exits with status 1, saying how many were not sent.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			return a.withStoreToWrite(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				if len(e.Config.Alerts.Recipients) == 0 {
					return fmt.Errorf("alerts.recipients is empty in %s: nobody to send to", e.Config.File)
				}
				res, err := pipeline.Deliver(cmd.Context(), e, db)
				printDeliveries(a.out, res)
				if err != nil {
					return err
				}
				if failed := res.Failed(); len(failed) > 0 {
					return fmt.Errorf("%d of %d digest(s) could not be sent; they stay queued and are retried after the backoff", len(failed), len(res.Digests))
				}
				return nil
			})
		},
	}
}

func (a *app) alertsTestEmailCommand() *cobra.Command {
	var to string
	cmd := &cobra.Command{
		Use:   "test-email",
		Short: "Send a sample alert message through the configured server",
		Long: `test-email sends one sample message, to --to or to every address in
alerts.recipients, through mail.smtp and prints the server's answer; with no
mail.smtp.host it writes the message to the outbox and prints its path. It
reads no store and records nothing.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			e, err := a.loadConfig()
			if err != nil {
				return err
			}
			var addrs []string
			if to != "" {
				addrs = []string{to}
			} else {
				for _, r := range e.Config.Alerts.Recipients {
					addrs = append(addrs, r.Email)
				}
			}
			if len(addrs) == 0 {
				return fmt.Errorf("no address: pass --to ADDR or list alerts.recipients in %s", e.Config.File)
			}
			results, err := pipeline.SendTest(cmd.Context(), e, addrs)
			failed := 0
			for _, r := range results {
				if r.Err != "" {
					failed++
					fmt.Fprintf(a.out, "test message to %s failed: %s\n", r.Recipient, r.Err)
					continue
				}
				fmt.Fprintf(a.out, "test message to %s %s\n", r.Recipient, r.Answer)
			}
			if err != nil {
				return err
			}
			if failed > 0 {
				return fmt.Errorf("%d of %d test messages not accepted", failed, len(results))
			}
			return nil
		},
	}
	cmd.Flags().StringVar(&to, "to", "", "address to send to (default: every alerts.recipients address)")
	return cmd
}
