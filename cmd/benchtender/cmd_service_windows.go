//go:build windows

package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"golang.org/x/sys/windows/svc"
	"golang.org/x/sys/windows/svc/mgr"
)

// cmdService installs, removes or runs benchtender as a Windows service,
// so that a campaign survives a reboot of the instrument PC:
//
//	benchtender service install --config C:\lab\campaign.toml [--name benchtender]
//	benchtender service remove [--name benchtender]
//
// The service starts automatically at boot, runs "benchtender service run
// --config FILE" as LocalSystem (change the account under Log On in the
// Services console; the account needs rights on the state folder and
// both instrument folders), and is restarted by the service manager 10 s
// after a failure. Its logs go to the config's log file.
func cmdService(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		return usageError{"service: the subcommands are install, remove and run"}
	}
	if isHelp(args[0]) {
		return helpRequest{flag.NewFlagSet("service", flag.ContinueOnError)}
	}
	fs := flag.NewFlagSet("service "+args[0], flag.ContinueOnError)
	name := fs.String("name", "benchtender", "the service's name")
	config := fs.String("config", "", "configuration file (install, run)")
	pos, err := parseFlags(fs, args[1:])
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usageError{fmt.Sprintf("service %s: unexpected %q", args[0], pos[0])}
	}
	switch args[0] {
	case "install":
		return installService(*name, *config, stdout)
	case "remove":
		return removeService(*name, stdout)
	case "run":
		if *config == "" {
			return usageError{"service run: give --config"}
		}
		return svc.Run(*name, &service{ctx: ctx, config: *config, stdout: stdout, stderr: stderr})
	}
	return usageError{fmt.Sprintf("service: unknown subcommand %q (install, remove or run)", args[0])}
}

func installService(name, config string, stdout io.Writer) error {
	if config == "" {
		return usageError{"service install: give --config"}
	}
	abs, err := filepath.Abs(config)
	if err != nil {
		return err
	}
	if _, err := loadConfig(abs); err != nil {
		return err // nothing is installed on a config that does not validate
	}
	exe, err := os.Executable()
	if err != nil {
		return fmt.Errorf("service install: %w", err)
	}
	m, err := mgr.Connect()
	if err != nil {
		return fmt.Errorf("service install: the service manager (run as administrator): %w", err)
	}
	defer m.Disconnect()
	s, err := m.CreateService(name, exe, mgr.Config{
		StartType:   mgr.StartAutomatic,
		DisplayName: "benchtender (" + name + ")",
		Description: "Runs the closed-loop experiment campaign of " + abs,
	}, "service", "run", "--name", name, "--config", abs)
	if err != nil {
		return fmt.Errorf("service install: %w", err)
	}
	defer s.Close()
	if err := s.SetRecoveryActions([]mgr.RecoveryAction{{Type: mgr.ServiceRestart, Delay: 10 * time.Second}}, 24*3600); err != nil {
		return fmt.Errorf("service install: restart on failure: %w", err)
	}
	fmt.Fprintf(stdout, "service %s installed: starts at boot, runs %s service run --config %s as LocalSystem; start it now with: sc start %s\n", name, exe, abs, name)
	return nil
}

func removeService(name string, stdout io.Writer) error {
	m, err := mgr.Connect()
	if err != nil {
		return fmt.Errorf("service remove: the service manager (run as administrator): %w", err)
	}
	defer m.Disconnect()
	s, err := m.OpenService(name)
	if err != nil {
		return fmt.Errorf("service remove: %s: %w", name, err)
	}
	defer s.Close()
	if err := s.Delete(); err != nil {
		return fmt.Errorf("service remove: %w", err)
	}
	fmt.Fprintf(stdout, "service %s removed (its state folder is left as it is)\n", name)
	return nil
}

// service runs the campaign under the Windows service manager: run's
// context is cancelled on Stop or Shutdown, which stops it cleanly.
type service struct {
	ctx            context.Context
	config         string
	stdout, stderr io.Writer
}

func (s *service) Execute(_ []string, req <-chan svc.ChangeRequest, status chan<- svc.Status) (bool, uint32) {
	status <- svc.Status{State: svc.StartPending}
	ctx, cancel := context.WithCancel(s.ctx)
	defer cancel()
	done := make(chan error, 1)
	go func() { done <- cmdRun(ctx, []string{s.config}, io.Discard, io.Discard) }()
	status <- svc.Status{State: svc.Running, Accepts: svc.AcceptStop | svc.AcceptShutdown}
	for {
		select {
		case err := <-done:
			if err != nil {
				return true, 1 // the service manager restarts it
			}
			return false, 0
		case c := <-req:
			switch c.Cmd {
			case svc.Interrogate:
				status <- c.CurrentStatus
			case svc.Stop, svc.Shutdown:
				status <- svc.Status{State: svc.StopPending}
				cancel()
				<-done
				return false, 0
			}
		}
	}
}
