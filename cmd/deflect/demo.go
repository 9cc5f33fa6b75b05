package main

import "fmt"

func init() {
	register(&command{
		name:    "demo",
		summary: "run the whole job on an embedded, fictional lensed galaxy",
		usage:   "[-o DIR] [--force]",
		help: `The end-to-end demo is not built yet. Until it is, "deflect demo" lists
the commands that exist and exits successfully.`,
		run: func(env *runEnv, args []string) error {
			fmt.Fprintln(env.stdout, "deflect demo: the end-to-end demo is not built yet. Commands available now:")
			printHelp(env.stdout)
			return nil
		},
	})
}
