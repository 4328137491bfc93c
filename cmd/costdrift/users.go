package main

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/spf13/cobra"
	"golang.org/x/term"

	"github.com/costdrift/costdrift/internal/web"
)

func (a *app) usersCommand() *cobra.Command {
	cmd := &cobra.Command{
		Use:   "users",
		Short: "Keep the names and passwords that sign in to the web view",
		Long: `users keeps the file named by http.users_file: one name and bcrypt hash of
its password a line, written owner-only (README "The web view"). The web
view reads it at every sign-in, so a change needs no restart; a name
removed is signed out at its next page.`,
	}
	add := &cobra.Command{
		Use:   "add NAME",
		Short: "Add a user, or set a user's new password",
		Long: `add asks for the password twice on the terminal, without showing it; from a
pipe it reads one line. A password is never an argument, which other
users of the machine could read.`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			path, err := a.usersFile()
			if err != nil {
				return err
			}
			pw, err := readPassword(cmd.InOrStdin(), a.errw)
			if err != nil {
				return err
			}
			if err := web.AddUser(path, args[0], pw); err != nil {
				return err
			}
			fmt.Fprintf(a.out, "%s can sign in (%s)\n", args[0], path)
			return nil
		},
	}
	remove := &cobra.Command{
		Use:   "remove NAME",
		Short: "Remove a user",
		Args:  cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			path, err := a.usersFile()
			if err != nil {
				return err
			}
			if err := web.RemoveUser(path, args[0]); err != nil {
				return err
			}
			fmt.Fprintf(a.out, "%s removed (%s)\n", args[0], path)
			return nil
		},
	}
	list := &cobra.Command{
		Use:   "list",
		Short: "List the users, one a line",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			path, err := a.usersFile()
			if err != nil {
				return err
			}
			u, err := web.ReadUsers(path)
			if err != nil {
				return err
			}
			for _, n := range u.Names() {
				fmt.Fprintln(a.out, n)
			}
			return nil
		},
	}
	cmd.AddCommand(add, remove, list)
	return cmd
}

// usersFile is http.users_file, resolved against the config's folder.
func (a *app) usersFile() (string, error) {
	e, err := a.loadConfig()
	if err != nil {
		return "", err
	}
	if e.Config.HTTP.UsersFile == "" {
		return "", errors.New("http.users_file is not set: name the file in the config, such as users_file: costdrift-users")
	}
	return e.Config.Path(e.Config.HTTP.UsersFile), nil
}

// readPassword reads a password twice from a terminal without echo, or
// one line from anything else.
func readPassword(in io.Reader, prompt io.Writer) (string, error) {
	if f, ok := in.(*os.File); ok && term.IsTerminal(int(f.Fd())) {
		fmt.Fprint(prompt, "Password: ")
		first, err := term.ReadPassword(int(f.Fd()))
		fmt.Fprintln(prompt)
		if err != nil {
			return "", fmt.Errorf("read password: %w", err)
		}
		fmt.Fprint(prompt, "Again: ")
		again, err := term.ReadPassword(int(f.Fd()))
		fmt.Fprintln(prompt)
		if err != nil {
			return "", fmt.Errorf("read password: %w", err)
		}
		if string(first) != string(again) {
			return "", errors.New("the two passwords differ")
		}
		return string(first), nil
	}
	line, err := bufio.NewReader(in).ReadString('\n')
	if err != nil && !(errors.Is(err, io.EOF) && line != "") {
		return "", fmt.Errorf("read password from standard input: %w", err)
	}
	return strings.TrimRight(line, "\r\n"), nil
}
