package main

import (
	"bytes"
	"context"
	"flag"
	"fmt"
	"io"
	"os"

	"coeval/store"
)

// releaseCmd makes, lists, bundles and loads releases of the compilation:
//
//	release create VERSION -title TITLE [-notes NOTES]
//	release list
//	release bundle VERSION -o FILE.zip
//	release load FILE.zip          (into an empty database)
func releaseCmd(ctx context.Context, cfg config, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		return fmt.Errorf("release: want create, list, bundle or load")
	}
	db, err := openStore(ctx, cfg.dbPath)
	if err != nil {
		return err
	}
	defer db.Close()
	sub, args := args[0], args[1:]
	switch sub {
	case "create":
		fl := flag.NewFlagSet("release create", flag.ContinueOnError)
		fl.SetOutput(stderr)
		title := fl.String("title", "", "the release's title (part of its citation)")
		notes := fl.String("notes", "", "what the release is for")
		if len(args) == 0 {
			return fmt.Errorf("release create: want VERSION -title TITLE")
		}
		version := args[0]
		if err := fl.Parse(args[1:]); err != nil {
			return err
		}
		rel, err := db.CutRelease(ctx, store.ReleaseForm{Version: version, Title: *title, Notes: *notes}, 0)
		if err != nil {
			return fmt.Errorf("release create: %w", err)
		}
		fmt.Fprintf(stdout, "release %s made: %d dates, %d events; %d records not accepted were left out\n",
			rel.Version, rel.Counts.Dates, rel.Counts.Events, len(rel.LeftOut))
		return nil
	case "list":
		rels, err := db.Releases(ctx)
		if err != nil {
			return err
		}
		for _, r := range rels {
			fmt.Fprintf(stdout, "%s\t%s\t%s\t%d dates\n", r.Version, r.Date(), r.Title, r.Counts.Dates)
		}
		return nil
	case "bundle":
		fl := flag.NewFlagSet("release bundle", flag.ContinueOnError)
		fl.SetOutput(stderr)
		out := fl.String("o", "", "the zip file to write")
		if len(args) == 0 {
			return fmt.Errorf("release bundle: want VERSION -o FILE.zip")
		}
		version := args[0]
		if err := fl.Parse(args[1:]); err != nil {
			return err
		}
		if *out == "" {
			return fmt.Errorf("release bundle: want -o FILE.zip")
		}
		rel, err := db.ReleaseByVersion(ctx, version)
		if err != nil {
			return err
		}
		path, err := db.ReleasePath(ctx, rel)
		if err != nil {
			return err
		}
		var buf bytes.Buffer
		if err := store.WriteReleaseBundle(ctx, path, rel, &buf); err != nil {
			return err
		}
		if err := os.WriteFile(*out, buf.Bytes(), 0o644); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "bundle of release %s written to %s\n", rel.Version, *out)
		return nil
	case "load":
		if len(args) != 1 {
			return fmt.Errorf("release load: want one FILE.zip")
		}
		b, err := os.ReadFile(args[0])
		if err != nil {
			return err
		}
		results, err := db.ImportBundle(ctx, args[0], bytes.NewReader(b), int64(len(b)))
		for _, r := range results {
			fmt.Fprintln(stdout, r.String())
		}
		return err
	}
	return fmt.Errorf("release: unknown command %q; want create, list, bundle or load", sub)
}
