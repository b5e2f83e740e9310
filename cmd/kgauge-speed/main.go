// Command kgauge-speed measures kgauge's speed and memory side by side with a bare page scan of the
// same file and with a reference library; see DEVELOPERS.md. Subcommands:
//
//	kgauge-speed gen --rows N --dims D --out FILE    write a Gaussian-mixture Parquet file
//	kgauge-speed gen-points --in TXT --out FILE      write a published point set as Parquet
//	kgauge-speed scan --workers W FILE               bare parquet-go page scan (the floor)
//	kgauge-speed run --out DIR                       the whole benchmark, report written to DIR
//	kgauge-speed render --out DIR                    rewrite DIR/SPEED.md from DIR/speed.json
package main

import (
	"bufio"
	"context"
	"encoding/binary"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"os/signal"
	"strings"
	"time"

	"github.com/kgauge/kgauge/bench/speed"
	"github.com/kgauge/kgauge/bench/synth"
	"github.com/kgauge/kgauge/internal/refsets"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	if err := run(ctx, os.Args[1:], os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, "kgauge-speed:", err)
		os.Exit(1)
	}
}

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		return fmt.Errorf("usage: kgauge-speed gen|scan|run [flags]")
	}
	fs := flag.NewFlagSet(args[0], flag.ContinueOnError)
	fs.SetOutput(stderr)
	switch args[0] {
	case "gen":
		o := synth.DefaultMixtureOptions()
		fs.IntVar(&o.Rows, "rows", 1_000_000, "rows")
		fs.IntVar(&o.Dims, "dims", 16, "columns")
		fs.IntVar(&o.K, "k", 10, "clusters")
		fs.Float64Var(&o.Separation, "separation", 6, "distance between centres in cluster sds")
		fs.IntVar(&o.RowGroup, "row-group", 1<<20, "rows per row group")
		fs.Uint64Var(&o.Seed, "seed", 1, "seed")
		fs.StringVar(&o.Vector, "vector", "", "write each row as one list<float32> column of this name")
		comp := fs.String("compression", "none", "snappy, zstd or none")
		out := fs.String("out", "", "output file")
		npy := fs.String("npy", "", "also write the rows as a NumPy .npy file (for the reference library)")
		if err := fs.Parse(args[1:]); err != nil {
			return err
		}
		if *npy != "" {
			if err := writeNpy(*npy, o); err != nil {
				return err
			}
		}
		var err error
		if o.Compression, err = synth.ParseCompression(*comp); err != nil {
			return err
		}
		if *out == "" {
			return fmt.Errorf("gen: --out is required")
		}
		return synth.WriteMixture(*out, o)
	case "scan":
		workers := fs.Int("workers", 1, "goroutines")
		if err := fs.Parse(args[1:]); err != nil {
			return err
		}
		start := time.Now()
		r, err := speed.Scan(fs.Arg(0), *workers)
		if err != nil {
			return err
		}
		return json.NewEncoder(stdout).Encode(map[string]any{"rows": r.Rows, "values": r.Values,
			"sum": r.Sum, "seconds": time.Since(start).Seconds()})
	case "gen-points":
		in := fs.String("in", "", "point set (text, one point a line)")
		out := fs.String("out", "", "output Parquet file")
		if err := fs.Parse(args[1:]); err != nil {
			return err
		}
		x, d, err := refsets.Read(*in)
		if err != nil {
			return err
		}
		return synth.WritePoints(*out, x, d)
	case "render":
		var cfg speed.Config
		cfg.Register(fs)
		if err := fs.Parse(args[1:]); err != nil {
			return err
		}
		return speed.Render(cfg)
	case "run":
		var cfg speed.Config
		cfg.Register(fs)
		if err := fs.Parse(args[1:]); err != nil {
			return err
		}
		return speed.Run(ctx, cfg, stderr)
	}
	return fmt.Errorf("unknown subcommand %q", args[0])
}

// writeNpy writes the mixture's rows as a float64 C-order NumPy array (format version 1.0).
func writeNpy(path string, o synth.MixtureOptions) error {
	x, _ := synth.Mixture(o)
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	header := fmt.Sprintf("{'descr': '<f8', 'fortran_order': False, 'shape': (%d, %d), }", o.Rows, o.Dims)
	pad := 64 - (10+len(header)+1)%64
	header += strings.Repeat(" ", pad) + "\n"
	w := bufio.NewWriterSize(f, 1<<20)
	w.WriteString("\x93NUMPY\x01\x00")
	binary.Write(w, binary.LittleEndian, uint16(len(header)))
	w.WriteString(header)
	buf := make([]byte, 8)
	for _, v := range x {
		binary.LittleEndian.PutUint64(buf, math.Float64bits(v))
		w.Write(buf)
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}
