package main

import (
	"context"
	"fmt"
	"os"
	"os/signal"
	"path/filepath"
	"sync"
	"time"

	"github.com/kardianos/service"
)

func init() {
	register(command{name: "service", summary: "install, uninstall, start or stop the daemon as a system service (systemd unit or Windows service)", run: runService})
}

// serviceName is the name the service is registered under unless --name
// says otherwise.
const serviceName = "ringlog"

// stopTimeout is how long the service manager waits for a stop. It must be
// longer than the daemon's drain: the daemon finishes the files in hand
// (one per worker, each well under a second) before it exits.
const stopTimeout = 90 * time.Second

// systemdUnit is our unit template (kardianos/service template syntax).
// Restart on failure, a stop timeout longer than the drain, SIGTERM to
// stop (the daemon treats it like Ctrl-C).
const systemdUnit = `[Unit]
Description={{Description}}
ConditionFileIsExecutable={{Path | cmdEscape}}
After=local-fs.target network-online.target
Wants=network-online.target

[Service]
Type=simple
ExecStart={{Path | cmdEscape}}{{range Arguments}} {{. | cmd}}{{end}}
{{if WorkingDirectory}}WorkingDirectory={{WorkingDirectory | cmdEscape}}
{{end}}{{if UserName}}User={{UserName}}
{{end}}Restart=on-failure
RestartSec=5
KillSignal=SIGTERM
TimeoutStopSec=90

[Install]
WantedBy=multi-user.target
`

func serviceConfig(name, cfgPath string) *service.Config {
	return &service.Config{
		Name:             name,
		DisplayName:      "ringlog impact-test damping recorder",
		Description:      "Watches the recorder's export folders, checks each hit file, estimates frequency and damping and records them in the ringlog history.",
		Arguments:        []string{"watch", "--config", cfgPath},
		WorkingDirectory: filepath.Dir(cfgPath),
		Option: service.KeyValue{
			"SystemdScript":          systemdUnit,
			"Restart":                "on-failure",
			"OnFailure":              "restart", // Windows recovery action
			"OnFailureDelayDuration": "5s",
			"OnFailureResetPeriod":   3600,
			"StartType":              "automatic",
			// Under a Unix service manager: SIGHUP drains like SIGTERM.
			"RunWait": func() {
				ch := make(chan os.Signal, 1)
				signal.Notify(ch, stopSignals...)
				<-ch
				signal.Stop(ch)
			},
		},
	}
}

func runService(ctx context.Context, e *env, args []string) error {
	fs := newFlags("service", "install|uninstall|start|stop|status --config FILE [--name NAME]", e.stderr)
	cfgPath := fs.String("config", "", "TOML configuration file the service runs with (required for install)")
	name := fs.String("name", serviceName, "service name (for several daemons on one PC)")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) != 1 {
		return usagef("give one action: install, uninstall, start, stop or status")
	}
	action := rest[0]
	abs := ""
	if *cfgPath != "" {
		if abs, err = filepath.Abs(*cfgPath); err != nil {
			return err
		}
		if _, err := loadConfig(abs); err != nil {
			return err
		}
	} else if action == "install" {
		return usagef("install needs --config FILE")
	}
	s, err := service.New(nil, serviceConfig(*name, abs))
	if err != nil {
		return fmt.Errorf("service manager: %w", err)
	}
	switch action {
	case "install", "uninstall", "start", "stop":
		if err := service.Control(s, action); err != nil {
			return fmt.Errorf("service %s %s (%s): %w", *name, action, service.ChosenSystem(), err)
		}
		fmt.Fprintf(e.stdout, "service %s: %s done (%s)\n", *name, action, service.ChosenSystem())
		if action == "install" {
			exe, _ := os.Executable()
			fmt.Fprint(e.stdout, installMessage(service.ChosenSystem().String(), *name, exe, abs))
		}
	case "status":
		st, err := s.Status()
		if err != nil {
			return fmt.Errorf("service %s status (%s): %w; is the service manager running and the service installed?", *name, service.ChosenSystem(), err)
		}
		fmt.Fprintf(e.stdout, "service %s: %s\n", *name, map[service.Status]string{
			service.StatusRunning: "running", service.StatusStopped: "stopped", service.StatusUnknown: "unknown"}[st])
	default:
		return usagef("unknown action %q: use install, uninstall, start, stop or status", action)
	}
	return nil
}

// serviceProgram runs the daemon under a service manager.
type serviceProgram struct {
	m      *Main
	cancel context.CancelFunc
	done   chan error
	once   sync.Once
}

func (p *serviceProgram) Start(s service.Service) error {
	ctx, cancel := context.WithCancel(context.Background())
	p.cancel = cancel
	p.done = make(chan error, 1)
	go func() {
		err := p.m.Run(ctx)
		if err != nil && ctx.Err() == nil {
			// The daemon stopped on its own: exit non-zero so that the
			// service manager restarts it (Restart=on-failure, recovery
			// action on Windows).
			p.m.Log.Error().Err(err).Msg("daemon stopped; exiting for the service manager to restart it")
			p.m.Close()
			os.Exit(exitFailure)
		}
		p.done <- err
	}()
	return nil
}

func (p *serviceProgram) Stop(s service.Service) error {
	p.cancel()
	select {
	case err := <-p.done:
		return err
	case <-time.After(stopTimeout - 10*time.Second):
		return fmt.Errorf("daemon did not drain in time")
	}
}

// runAsService runs an opened daemon under the service manager until it
// is told to stop.
func runAsService(m *Main) error {
	p := &serviceProgram{m: m}
	s, err := service.New(p, serviceConfig(serviceName, m.Config.path))
	if err != nil {
		return err
	}
	return s.Run()
}

// installMessage says what 'service install' wrote and where, for the
// service system kardianos/service chose, and says so plainly when it is
// not systemd (then nothing restarts a daemon that fails).
func installMessage(system, name, exe, cfg string) string {
	run := fmt.Sprintf("%s watch --config %s", exe, cfg)
	switch system {
	case "linux-systemd":
		return fmt.Sprintf("wrote the systemd unit /etc/systemd/system/%s.service (Restart=on-failure after 5 s, TimeoutStopSec=90) running: %s\n"+
			"start it with 'ringlog service start' or 'systemctl start %s'\n", name, run, name)
	case "windows-service":
		return fmt.Sprintf("registered the Windows service %q (automatic start; recovery: restart after 5 s) running: %s\n", name, run)
	case "linux-sysv":
		return fmt.Sprintf("no systemd on this machine: wrote the SysV init script /etc/init.d/%s running: %s\n"+
			"warning: SysV init does not restart the daemon when it fails; watch it with 'ringlog status'\n", name, run)
	case "linux-openrc":
		return fmt.Sprintf("no systemd on this machine: wrote the OpenRC init script /etc/init.d/%s running: %s\n"+
			"warning: the script does not restart the daemon when it fails\n", name, run)
	case "linux-upstart":
		return fmt.Sprintf("no systemd on this machine: wrote the Upstart job /etc/init/%s.conf running: %s\n", name, run)
	case "darwin-launchd":
		return fmt.Sprintf("wrote the launchd job %s.plist (in /Library/LaunchDaemons as root, else ~/Library/LaunchAgents) running: %s\n", name, run)
	}
	return fmt.Sprintf("installed with the service system %q (not systemd; restart on failure is not set up by ringlog) running: %s\n", system, run)
}
