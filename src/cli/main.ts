// The valvewright command line: one dispatcher, one module per command.
import { CliError } from './args.ts';

export interface CommandIO {
  out(line: string): void;
  err(line: string): void;
}

type Command = (argv: readonly string[], io: CommandIO) => Promise<number>;

const COMMANDS: Record<string, { summary: string; load: () => Promise<Command> }> = {
  render: { summary: 'render a WAV through a design or netlist', load: async () => (await import('./commands/render.ts')).runRender },
  op: { summary: 'DC operating point (node voltages, tube currents and dissipation)', load: async () => (await import('./commands/op.ts')).runOp },
  netlist: { summary: 'print a design as netlist-v1 JSON', load: async () => (await import('./commands/netlist.ts')).runNetlist },
  pair: { summary: 'loudness-matched A/B or dry/processed WAVs from one DI, with a sheet', load: async () => (await import('./commands/pair.ts')).runPair },
  bench: { summary: 'real-time factors of the templates at 1x-8x oversampling', load: async () => (await import('./commands/bench.ts')).runBench },
  check: { summary: 'wiring check and worst-case ratings sheet of a design', load: async () => (await import('./commands/check.ts')).runCheck },
  supply: { summary: 'power-supply estimate (B+ loaded and unloaded, ripple, heaters)', load: async () => (await import('./commands/supply.ts')).runSupply },
  spread: { summary: 'seeded Monte Carlo over tube samples and part tolerances', load: async () => (await import('./commands/spread.ts')).runSpread },
  ac: { summary: 'small-signal response of the whole circuit and the tone network', load: async () => (await import('./commands/ac.ts')).runAc },
  parts: { summary: 'parts list with ratings to buy (CSV with --csv)', load: async () => (await import('./commands/parts.ts')).runParts },
  tubes: {
    summary: 'list the tube library (envelopes, sections, models, ratings, sources; --json)',
    load: async () => (await import('./commands/tubes.ts')).runTubes,
  },
  tube: {
    summary: 'tube fit (--triode|--pentode) POINTS.csv: fit a model to data-sheet points',
    load: async () => (await import('./commands/tube-fit.ts')).runTube,
  },
  spice: { summary: 'export a SPICE-syntax netlist with behavioural tube sources', load: async () => (await import('./commands/spice.ts')).runSpice },
  loudness: {
    summary: 'integrated loudness, loudness range and true peak of a WAV (BS.1770-4)',
    load: async () => {
      const { runLoudness } = await import('./commands/loudness.ts');
      return (argv, io) => runLoudness(argv, io.out);
    },
  },
};

function usage(io: CommandIO): void {
  io.out("usage: valvewright COMMAND [options]   (valvewright COMMAND --help for a command's options)");
  for (const [name, c] of Object.entries(COMMANDS)) io.out(`  ${name.padEnd(10)} ${c.summary}`);
  io.out('High voltage: tube circuits run at lethal voltages. Build and test them only with the training and');
  io.out('precautions your local codes and licensed practice require; this tool does not make a circuit safe.');
}

/** The usage line of each command (every command answers --help, exit 0). */
async function usageOf(name: string): Promise<string> {
  switch (name) {
    case 'render':
      return (await import('./commands/render.ts')).RENDER_USAGE;
    case 'op':
      return (await import('./commands/op.ts')).OP_USAGE;
    case 'netlist':
      return (await import('./commands/netlist.ts')).NETLIST_USAGE;
    case 'pair':
      return (await import('./commands/pair.ts')).PAIR_USAGE;
    case 'bench':
      return 'usage: valvewright bench [--json] [--seconds S] [--template T] [--tubes exact|table] [--in-process]';
    case 'check':
      return (await import('./commands/check.ts')).CHECK_USAGE;
    case 'supply':
      return (await import('./commands/supply.ts')).SUPPLY_USAGE;
    case 'spread':
      return (await import('./commands/spread.ts')).SPREAD_USAGE;
    case 'ac':
      return (await import('./commands/ac.ts')).AC_USAGE;
    case 'parts':
      return (await import('./commands/parts.ts')).PARTS_USAGE;
    case 'spice':
      return (await import('./commands/spice.ts')).SPICE_USAGE;
    case 'loudness':
      return 'usage: valvewright loudness FILE [--json]';
    default:
      return `usage: valvewright ${name} [options]`;
  }
}

const SET_HELP = [
  '--set PART.FIELD=VALUE (repeatable) changes a value without editing the file: VOL.position=0.8 (0 = end 1,',
  '  1 = end 2, clockwise), R3.ohms=220k or 4k7 (SI or RKM), C6.farads=10n, V1.sample=1.2, V1.type=12AT7,',
  "  S1.closed=false, B+.volts=300, load.ohms=1M. A netlist takes its elements' ohms, farads and volts.",
];
const EXIT_HELP = 'exit status: 0 done (no errors found), 1 an error (bad input, or a check that found an error), 2 bad command';

/** Take every global `--tubes FILE` out of argv and register the user tube files it names. */
async function loadUserTubes(argv: readonly string[]): Promise<string[]> {
  const rest: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    if (a !== '--tubes' && !a.startsWith('--tubes=')) {
      rest.push(a);
      continue;
    }
    const file = a.startsWith('--tubes=') ? a.slice(8) : argv[++i];
    if (!file) throw new CliError('--tubes needs a user tube file (written by valvewright tube fit --out)');
    const { readFile } = await import('node:fs/promises');
    const { userTubeType } = await import('../dsp/tubes/user-tube.ts');
    const { registerUserTube } = await import('../dsp/tubes/library.ts');
    let doc: unknown;
    try {
      doc = JSON.parse(await readFile(file, 'utf8'));
    } catch (e) {
      throw new CliError(`cannot read user tube file ${file}: ${(e as Error).message}`);
    }
    try {
      registerUserTube(userTubeType(doc, file));
    } catch (e) {
      throw new CliError((e as Error).message);
    }
  }
  return rest;
}

export async function main(argv0: readonly string[], io: CommandIO = { out: (l) => console.log(l), err: (l) => console.error(l) }): Promise<number> {
  let argv: readonly string[];
  try {
    argv = await loadUserTubes(argv0);
  } catch (e) {
    io.err(`valvewright: ${(e as Error).message}`);
    return 1;
  }
  const [name, ...rest] = argv;
  if (!name || name === '--help' || name === '-h' || name === 'help') {
    usage(io);
    return name ? 0 : 2;
  }
  const cmd = COMMANDS[name];
  if (!cmd) {
    io.err(`valvewright: unknown command "${name}" (commands: ${Object.keys(COMMANDS).join(', ')})`);
    return 2;
  }
  // tubes and tube print their own help
  if ((rest.includes('--help') || rest.includes('-h')) && name !== 'tubes' && name !== 'tube') {
    io.out(await usageOf(name));
    io.out(`  ${cmd.summary}`);
    if (/--set/.test(await usageOf(name))) for (const l of SET_HELP) io.out(l);
    io.out(EXIT_HELP);
    return 0;
  }
  try {
    return await (
      await cmd.load()
    )(rest, io);
  } catch (e) {
    const known =
      e instanceof CliError || (e instanceof Error && /Error$/.test(e.name) && e.name !== 'Error' && e.name !== 'TypeError' && e.name !== 'RangeError');
    const msg = e instanceof Error ? e.message : String(e);
    io.err(`valvewright ${name}: ${msg}`);
    if (!known && e instanceof Error && process.env.VALVEWRIGHT_DEBUG) io.err(e.stack ?? '');
    return 1;
  }
}
