// Command coeval serves the shared compilation of eruption dates and sedimentary-record ages, and imports
// and exports its CSV files. It only wires: configuration from flags and environment, the store, the
// migrations, the embedded demo scenario and the web handler.
//
//	coeval [-db FILE] [-addr HOST:PORT] [-demo=false]   serve (the default)
//	coeval [-db FILE] import KIND [SECTION] FILE         KIND: provinces, units, sections, dates; or, for one
//	                                                     section: measurements, ties, events, hiatuses
//	coeval [-db FILE] export KIND [SECTION] [-o FILE]    the same kinds, in the import formats
//	coeval [-db FILE] import dates FILE -mapping NAME    a paper's table through a saved mapping
//	coeval [-db FILE] export mappings [-o FILE]          the saved mappings (JSON); import mappings FILE
//	coeval [-db FILE] target [CODE]                      show or set the target ⁴⁰Ar/³⁹Ar calibration
package main

import (
	"bufio"
	"context"
	"embed"
	"errors"
	"flag"
	"fmt"
	"io"
	"io/fs"
	"log/slog"
	"net"
	"net/http"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"syscall"
	"time"

	"golang.org/x/term"

	"coeval/migrations"
	"coeval/static"
	"coeval/store"
	"coeval/testdata/demo/large"
	"coeval/web"
)

//go:embed testdata/demo/*.csv
var demoFiles embed.FS

// demoLabel is shown on every page while the compilation holds the demo scenario.
const demoLabel = "The four provinces (Hvarn, Korrovask, Veldrith, Ymberlaine), their units, laboratories, citations and the five sections are an invented scenario for trying coeval out — not real measurements."

// config is everything main reads from flags and the environment.
type config struct {
	dbPath        string
	addr          string
	demo          bool
	secureCookies bool
}

func envOr(key, def string) string {
	if v := os.Getenv(key); v != "" {
		return v
	}
	return def
}

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	if err := run(ctx, os.Args[1:], os.Stdout, os.Stderr); err != nil {
		if !errors.Is(err, flag.ErrHelp) {
			fmt.Fprintln(os.Stderr, "coeval:", err)
		}
		os.Exit(1)
	}
}

// run parses the command line and runs the command; it returns when the command is done or ctx ends.
func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	cfg := config{}
	fl := flag.NewFlagSet("coeval", flag.ContinueOnError)
	fl.SetOutput(stderr)
	fl.StringVar(&cfg.dbPath, "db", envOr("COEVAL_DB", "coeval.db"), "SQLite database file (env COEVAL_DB)")
	fl.StringVar(&cfg.addr, "addr", envOr("COEVAL_ADDR", "localhost:8080"), "listen address (env COEVAL_ADDR)")
	fl.BoolVar(&cfg.demo, "demo", envOr("COEVAL_DEMO", "true") != "false", "seed the invented demo scenario into an empty database (env COEVAL_DEMO)")
	fl.BoolVar(&cfg.secureCookies, "secure-cookies", envOr("COEVAL_SECURE_COOKIES", "false") == "true", "mark the session cookie Secure: set when served over TLS (env COEVAL_SECURE_COOKIES)")
	fl.Usage = func() {
		fmt.Fprint(stderr, `usage:
  coeval [-db FILE] [-addr HOST:PORT] [-demo=false]   serve the compilation (default)
  coeval [-db FILE] import KIND [SECTION] FILE         import a CSV file, all or nothing
  coeval [-db FILE] export KIND [SECTION] [-o FILE]    export in the same format
  coeval [-db FILE] import dates FILE -mapping NAME    import a paper's table (CSV or .xlsx) through a saved mapping
  coeval [-db FILE] export mappings [-o FILE]          the saved mappings of papers' tables, as JSON
  coeval [-db FILE] import mappings FILE               read them back, all or none
  coeval [-db FILE] user add NAME -role ROLE           add an account (password from the terminal or stdin)
  coeval [-db FILE] backup FILE                        a consistent copy of the database, while it runs
  coeval [-db FILE] target [CODE]                      show the calibrations, or set the target one
  coeval [-db FILE] release create VERSION -title T    freeze the accepted records as a citable release
  coeval [-db FILE] release list | bundle VERSION -o F.zip | load F.zip   list, bundle, load into an empty database
  coeval demo large -o DIR [-provinces N …]            write a large invented compilation to import
KIND: provinces, units, sections, dates; for one SECTION: measurements, ties, events, hiatuses
flags:
`)
		fl.PrintDefaults()
	}
	if err := fl.Parse(args); err != nil {
		return err
	}
	rest := fl.Args()
	cmd := "serve"
	if len(rest) > 0 {
		cmd, rest = rest[0], rest[1:]
	}
	logger := slog.New(slog.NewTextHandler(stderr, nil))
	switch cmd {
	case "serve":
		if len(rest) > 0 {
			return fmt.Errorf("serve takes no arguments, got %q", rest)
		}
		return serve(ctx, cfg, logger, stdout)
	case "import":
		return importCmd(ctx, cfg, rest, stdout)
	case "export":
		return exportCmd(ctx, cfg, rest, stdout, stderr)
	case "user":
		return userCmd(ctx, cfg, rest, os.Stdin, stdout, stderr)
	case "backup":
		return backupCmd(ctx, cfg, rest, stdout)
	case "target":
		return targetCmd(ctx, cfg, rest, stdout)
	case "demo":
		return demoCmd(rest, stdout, stderr)
	case "release":
		return releaseCmd(ctx, cfg, rest, stdout, stderr)
	}
	fl.Usage()
	return fmt.Errorf("unknown command %q", cmd)
}

// openStore opens and migrates the database file.
func openStore(ctx context.Context, path string) (*store.DB, error) {
	db, err := store.Open(ctx, path)
	if err != nil {
		return nil, err
	}
	if _, err := db.Migrate(ctx, migrations.FS); err != nil {
		db.Close()
		return nil, err
	}
	return db, nil
}

func demoFS() fs.FS {
	sub, err := fs.Sub(demoFiles, "testdata/demo")
	if err != nil {
		panic(err) // the embed pattern guarantees the folder
	}
	return sub
}

// openForServing opens and migrates the database; when it cannot be written (read-only storage, a full
// disk) but is already migrated, it opens it read-only instead, so the compilation can still be read.
func openForServing(ctx context.Context, path string, logger *slog.Logger) (*store.DB, error) {
	db, err := openStore(ctx, path)
	if err == nil || !store.IsUnwritable(err) {
		return db, err
	}
	ro, roErr := store.OpenReadOnly(ctx, path)
	if roErr != nil {
		return nil, err
	}
	pending, perr := ro.PendingMigrations(ctx, migrations.FS)
	if perr != nil || len(pending) > 0 {
		ro.Close()
		if perr != nil {
			return nil, perr
		}
		return nil, fmt.Errorf("the database %s cannot be written (%v) and needs updating to this version of coeval (migrations %v): make it writable and start again", path, err, pending)
	}
	logger.Warn("the database cannot be written: serving it read-only; sign-ins last until the server stops", "db", path, "err", err)
	return ro, nil
}

func serve(ctx context.Context, cfg config, logger *slog.Logger, stdout io.Writer) error {
	db, err := openForServing(ctx, cfg.dbPath, logger)
	if err != nil {
		return err
	}
	defer db.Close()
	if db.ReadOnly() {
		fmt.Fprintf(stdout, "coeval: %s cannot be written (read-only storage or a full disk); serving it for reading only\n", cfg.dbPath)
	}
	if cfg.demo && !db.ReadOnly() {
		seeded, results, err := db.SeedDemo(ctx, demoFS(), demoLabel)
		if err != nil {
			return err
		}
		if seeded {
			fmt.Fprintf(stdout, "coeval: %s was empty; seeded the invented demo scenario (%d files)\n", cfg.dbPath, len(results))
		}
	}
	// Uploads checked more than a day ago and never imported are dropped (also on every new upload). A
	// database that cannot be written keeps them; serving goes on.
	if n, err := db.PurgeUploads(ctx); err != nil {
		logger.Warn("uploads not purged", "err", err)
	} else if n > 0 {
		logger.Info("purged uploads checked more than a day ago and never imported", "count", n)
	}
	ln, err := net.Listen("tcp", cfg.addr)
	if err != nil {
		return fmt.Errorf("listen on %s: %w", cfg.addr, err)
	}
	srv := &http.Server{
		Handler:           web.NewHandler(db, logger, static.FS, web.WithSecureCookies(cfg.secureCookies)),
		ReadHeaderTimeout: 10 * time.Second,
		ReadTimeout:       5 * time.Minute, // uploads of large files
		WriteTimeout:      5 * time.Minute,
		IdleTimeout:       2 * time.Minute,
	}
	fmt.Fprintf(stdout, "coeval: serving http://%s (database %s); Ctrl-C stops\n", displayAddr(ln.Addr()), cfg.dbPath)
	errc := make(chan error, 1)
	go func() { errc <- srv.Serve(ln) }()
	select {
	case err := <-errc:
		return err
	case <-ctx.Done():
	}
	shutdownCtx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
	defer cancel()
	if err := srv.Shutdown(shutdownCtx); err != nil {
		return fmt.Errorf("shutdown: %w", err)
	}
	fmt.Fprintln(stdout, "coeval: stopped")
	return nil
}

// displayAddr turns a wildcard listen address into one a browser can open.
func displayAddr(a net.Addr) string {
	s := a.String()
	host, port, err := net.SplitHostPort(s)
	if err != nil {
		return s
	}
	if host == "" || host == "::" || host == "0.0.0.0" || host == "127.0.0.1" {
		host = "localhost"
	}
	return net.JoinHostPort(host, port)
}

// kindArgs splits KIND [SECTION] and checks that the section is given exactly when the kind needs it.
func kindArgs(verb string, args []string, wantFile bool) (kind, section string, rest []string, err error) {
	if len(args) == 0 {
		return "", "", nil, fmt.Errorf("%s: want KIND (provinces, units, sections, dates, measurements, ties, events, hiatuses)", verb)
	}
	kind, args = args[0], args[1:]
	perSection, ok := store.ExportKinds[kind]
	if !ok {
		return "", "", nil, fmt.Errorf("%s: unknown kind %q; want provinces, units, sections, dates, measurements, ties, events or hiatuses", verb, kind)
	}
	if perSection {
		if len(args) == 0 {
			return "", "", nil, fmt.Errorf("%s %s: want the section name, e.g. %s %s \"Skarfell Creek\" FILE.csv", verb, kind, verb, kind)
		}
		section, args = args[0], args[1:]
	}
	if wantFile && len(args) != 1 {
		return "", "", nil, fmt.Errorf("%s %s: want one FILE.csv after the kind%s", verb, kind, map[bool]string{true: " and section", false: ""}[perSection])
	}
	return kind, section, args, nil
}

// mappingFlag takes "-mapping NAME" (or -mapping=NAME, with one or two dashes) out of args.
func mappingFlag(args []string) (name string, rest []string, err error) {
	for i := 0; i < len(args); i++ {
		a := args[i]
		flagName, value, hasValue := strings.Cut(strings.TrimLeft(a, "-"), "=")
		if !strings.HasPrefix(a, "-") || flagName != "mapping" {
			rest = append(rest, a)
			continue
		}
		if !hasValue {
			if i+1 >= len(args) {
				return "", nil, fmt.Errorf("import: -mapping wants the name of a saved mapping")
			}
			i++
			value = args[i]
		}
		name = value
	}
	return name, rest, nil
}

func importCmd(ctx context.Context, cfg config, args []string, stdout io.Writer) error {
	if len(args) > 0 && args[0] == "mappings" {
		return importMappingsCmd(ctx, cfg, args[1:], stdout)
	}
	mapping, args, err := mappingFlag(args)
	if err != nil {
		return err
	}
	kind, section, rest, err := kindArgs("import", args, true)
	if err != nil {
		return err
	}
	file := rest[0]
	if mapping != "" && kind != "dates" {
		return fmt.Errorf("import %s: -mapping reads dates only", kind)
	}
	db, err := openStore(ctx, cfg.dbPath)
	if err != nil {
		return err
	}
	defer db.Close()
	if mapping != "" {
		return importMappedCmd(ctx, db, cfg, mapping, file, stdout)
	}
	abs, err := filepath.Abs(file)
	if err != nil {
		return err
	}
	res, err := db.Import(ctx, kind, section, os.DirFS(filepath.Dir(abs)), filepath.Base(abs))
	if err != nil {
		return importError(err, file, cfg)
	}
	fmt.Fprintln(stdout, res.String())
	return nil
}

// importError says why an import was refused: its problems, or a database that cannot be written.
func importError(err error, file string, cfg config) error {
	if ve, ok := store.AsValidation(err); ok {
		return fmt.Errorf("import %s rejected, nothing was imported:\n%s", file, indent(ve.Problems))
	}
	if store.IsUnwritable(err) {
		return fmt.Errorf("import %s: the database %s cannot be written (read-only or disk full); nothing was imported", file, cfg.dbPath)
	}
	return err
}

func indent(ps []store.Problem) string {
	lines := make([]string, len(ps))
	for i, p := range ps {
		lines[i] = "  " + p.String()
	}
	return strings.Join(lines, "\n")
}

// importMappedCmd imports a table as a paper publishes it through a saved mapping, all or nothing.
func importMappedCmd(ctx context.Context, db *store.DB, cfg config, name, file string, stdout io.Writer) error {
	m, err := db.MappingByName(ctx, name)
	if errors.Is(err, store.ErrNotFound) {
		ms, _ := db.Mappings(ctx)
		names := make([]string, len(ms))
		for i, x := range ms {
			names[i] = x.Name
		}
		return fmt.Errorf("import %s: no saved mapping named %q (saved: %s)", file, name, orNone(names))
	} else if err != nil {
		return err
	}
	body, err := os.ReadFile(file)
	if err != nil {
		return err
	}
	res, mp, err := db.ImportMapped(ctx, m, filepath.Base(file), body)
	if err != nil {
		return importError(err, file, cfg)
	}
	fmt.Fprintln(stdout, res.String())
	for _, sk := range mp.Skipped {
		fmt.Fprintf(stdout, "  skipped line %d (%s): %s\n", sk.Line, sk.Reason, sk.Text)
	}
	return nil
}

func orNone(ss []string) string {
	if len(ss) == 0 {
		return "none"
	}
	return strings.Join(ss, ", ")
}

// importMappingsCmd reads saved mappings (as export mappings writes them), all or none.
func importMappingsCmd(ctx context.Context, cfg config, args []string, stdout io.Writer) error {
	if len(args) != 1 {
		return fmt.Errorf("import mappings: want one FILE.json (as export mappings writes)")
	}
	f, err := os.Open(args[0])
	if err != nil {
		return err
	}
	defer f.Close()
	db, err := openStore(ctx, cfg.dbPath)
	if err != nil {
		return err
	}
	defer db.Close()
	n, err := db.ImportMappings(ctx, filepath.Base(args[0]), f)
	if ve, ok := store.AsValidation(err); ok {
		return fmt.Errorf("import mappings %s rejected, nothing was imported:\n%s", args[0], indent(ve.Problems))
	} else if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "%s: %d mapping(s) added (those already saved as they are were left)\n", args[0], n)
	return nil
}

func exportCmd(ctx context.Context, cfg config, args []string, stdout, stderr io.Writer) error {
	exportTo := func(db *store.DB, kind, section string, w io.Writer) error { return db.Export(ctx, kind, section, w) }
	if len(args) > 0 && args[0] == "mappings" {
		args = append([]string{"dates"}, args[1:]...) // the flags as for any kind
		exportTo = func(db *store.DB, _, _ string, w io.Writer) error { return db.ExportMappings(ctx, w) }
	}
	kind, section, rest, err := kindArgs("export", args, false)
	if err != nil {
		return err
	}
	fl := flag.NewFlagSet("export", flag.ContinueOnError)
	fl.SetOutput(stderr)
	out := fl.String("o", "", "write to this file instead of standard output")
	if err := fl.Parse(rest); err != nil {
		return err
	}
	if fl.NArg() > 0 {
		return fmt.Errorf("export: unexpected arguments %q", fl.Args())
	}
	db, err := openStore(ctx, cfg.dbPath)
	if err != nil {
		return err
	}
	defer db.Close()
	if *out == "" {
		return exportTo(db, kind, section, stdout)
	}
	// Write to a temporary file beside the target and rename, so a failed export leaves no partial file.
	tmp, err := os.CreateTemp(filepath.Dir(*out), ".coeval-export-*")
	if err != nil {
		return err
	}
	defer os.Remove(tmp.Name())
	if err := exportTo(db, kind, section, tmp); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Close(); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), *out)
}

// userCmd adds an account: coeval user add NAME -role ROLE. The password is read without echo from a
// terminal, or as the first line of standard input (for scripts).
func userCmd(ctx context.Context, cfg config, args []string, stdin *os.File, stdout, stderr io.Writer) error {
	if len(args) < 2 || args[0] != "add" {
		return fmt.Errorf("user: want 'user add NAME -role ROLE' (roles: %s)", strings.Join(store.Roles(), ", "))
	}
	name := args[1]
	fl := flag.NewFlagSet("user add", flag.ContinueOnError)
	fl.SetOutput(stderr)
	role := fl.String("role", store.RoleReader, "role: "+strings.Join(store.Roles(), ", "))
	if err := fl.Parse(args[2:]); err != nil {
		return err
	}
	var password string
	if term.IsTerminal(int(stdin.Fd())) {
		fmt.Fprint(stdout, "Password for "+name+": ")
		b, err := term.ReadPassword(int(stdin.Fd()))
		fmt.Fprintln(stdout)
		if err != nil {
			return err
		}
		password = string(b)
	} else {
		line, err := bufio.NewReader(stdin).ReadString('\n')
		if err != nil && line == "" {
			return fmt.Errorf("user add: give the password as the first line of standard input")
		}
		password = strings.TrimRight(line, "\r\n")
	}
	db, err := openStore(ctx, cfg.dbPath)
	if err != nil {
		return err
	}
	defer db.Close()
	u, err := db.CreateUser(ctx, name, *role, password)
	if err != nil {
		if ve, ok := store.AsValidation(err); ok {
			return fmt.Errorf("user add:\n%s", indent(ve.Problems))
		}
		return err
	}
	fmt.Fprintf(stdout, "added %s (%s)\n", u.Name, u.Role)
	return nil
}

// backupCmd writes a consistent snapshot of the database to FILE while the server may be running.
func backupCmd(ctx context.Context, cfg config, args []string, stdout io.Writer) error {
	if len(args) != 1 {
		return fmt.Errorf("backup: want one FILE to write")
	}
	db, err := openStore(ctx, cfg.dbPath)
	if err != nil {
		return err
	}
	defer db.Close()
	if err := db.Backup(ctx, args[0]); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "backup of %s written to %s\n", cfg.dbPath, args[0])
	return nil
}

// targetCmd lists the calibrations with the target marked, or makes CODE the target.
func targetCmd(ctx context.Context, cfg config, args []string, stdout io.Writer) error {
	if len(args) > 1 {
		return fmt.Errorf("target: want at most one calibration CODE, got %q", args)
	}
	db, err := openStore(ctx, cfg.dbPath)
	if err != nil {
		return err
	}
	defer db.Close()
	if len(args) == 1 {
		if err := db.SetTargetCalibration(ctx, args[0], "command line"); err != nil {
			if errors.Is(err, store.ErrNotFound) {
				return fmt.Errorf("target: no calibration %q; run coeval target to list them", args[0])
			}
			return err
		}
	}
	cals, err := db.Calibrations(ctx)
	if err != nil {
		return err
	}
	for _, c := range cals {
		mark := " "
		if c.IsTarget {
			mark = "*"
		}
		fmt.Fprintf(stdout, "%s %-18s %s\n", mark, c.Code, c.Name)
	}
	return nil
}

// demoCmd writes a large invented compilation (testdata/demo/large) as import files with a manifest.
func demoCmd(args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 || args[0] != "large" {
		return fmt.Errorf("demo: want \"demo large -o DIR\" (the small demo is seeded by serve)")
	}
	sz := large.Default()
	fl := flag.NewFlagSet("demo large", flag.ContinueOnError)
	fl.SetOutput(stderr)
	out := fl.String("o", "", "folder to write the files into (created if needed)")
	fl.IntVar(&sz.Provinces, "provinces", sz.Provinces, "provinces")
	fl.IntVar(&sz.Units, "units", sz.Units, "units, spread over the provinces")
	fl.IntVar(&sz.Dates, "dates", sz.Dates, "dates (U–Pb and ⁴⁰Ar/³⁹Ar), spread over the units")
	fl.IntVar(&sz.Sections, "sections", sz.Sections, "sedimentary sections")
	fl.IntVar(&sz.SamplesPerSection, "samples", sz.SamplesPerSection, "samples per section")
	fl.IntVar(&sz.Ties, "ties", sz.Ties, "tie points, spread over the sections")
	fl.IntVar(&sz.Events, "events", sz.Events, "events, spread over the sections")
	fl.Uint64Var(&sz.Seed, "seed", sz.Seed, "random seed: the same seed and sizes write the same files")
	if err := fl.Parse(args[1:]); err != nil {
		return err
	}
	if *out == "" || fl.NArg() > 0 {
		return fmt.Errorf("demo large: want -o DIR and no other arguments")
	}
	files, err := large.Write(*out, sz)
	if err != nil {
		return fmt.Errorf("demo large: %w", err)
	}
	fmt.Fprintf(stdout, "wrote %d import files, manifest.csv and README.md of an INVENTED compilation to %s (%d provinces, %d units, %d dates, %d sections × %d samples, %d ties, %d events, seed %d)\n",
		len(files), *out, sz.Provinces, sz.Units, sz.Dates, sz.Sections, sz.SamplesPerSection, sz.Ties, sz.Events, sz.Seed)
	fmt.Fprintf(stdout, "load them in the order of %s, e.g. coeval import provinces %s\n", filepath.Join(*out, "manifest.csv"), filepath.Join(*out, "provinces.csv"))
	return nil
}
