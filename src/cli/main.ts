import { Command, CommanderError, InvalidArgumentError, Option } from 'commander';
import { UsageError } from '../errors.js';
import { tool } from '../version.js';
import { runInspect, type InspectOptions } from './inspect.js';
// screen and rules load the rule engine and every reporter: imported when used, so that
// `inspect` (and every worker thread) starts faster
const screenModule = () => import('./screen.js');
const rulesModule = () => import('./rules.js');
import { ExitCode, type CliIo } from './io.js';

const positiveNumber = (what: string) => (value: string) => {
  const n = Number(value);
  if (!Number.isFinite(n) || n <= 0) throw new InvalidArgumentError(`${what} must be a positive number, not "${value}".`);
  return n;
};
const positiveInteger = (value: string) => {
  const n = Number(value);
  if (!Number.isSafeInteger(n) || n < 1) throw new InvalidArgumentError(`must be a whole number ≥ 1, not "${value}".`);
  return n;
};
const nonNegativeInteger = (value: string) => {
  const n = Number(value);
  if (!Number.isSafeInteger(n) || n < 0) throw new InvalidArgumentError(`must be a whole number ≥ 0, not "${value}".`);
  return n;
};
const fraction = (value: string) => {
  const n = Number(value);
  if (!(n >= 0 && n < 1)) throw new InvalidArgumentError(`overlap must be at least 0 and less than 1, not "${value}".`);
  return n;
};

/** Options of every command that reads recordings. */
function readOptions(cmd: Command): Command {
  return cmd
    .option('--sidecar <file>', 'channel metadata file for every recording (default: <recording>.channels.yaml when present)')
    .option('--channel-table <file>', "campaign channel table (CSV): its rows for a recording name its channels, units and ranges when it has no sidecar of its own")
    .option('--sample-rate <hz>', 'sample rate for formats without one (CSV without time column, raw)', positiveNumber('sample rate'))
    .option('--decimal-comma', 'CSV: numbers use a decimal comma (fields separated by ";" or tabs)')
    .option('-j, --jobs <n>', 'threads to use (default: the number of cores)', positiveInteger);
}

/** Options of every command that writes the gate's reports. */
function reportOptions(cmd: Command, json = 'write the JSON audit record (atomically)'): Command {
  return cmd
    .option('--junit <file>', 'write JUnit XML for the CI server (atomically)')
    .option('--json <file>', json)
    .option('--html <file>', 'write the HTML report for people: one self-contained file (atomically)')
    .option('--github', 'GitHub Actions: annotations for failing channels, and a job summary to $GITHUB_STEP_SUMMARY')
    .option('-q, --quiet', 'print only failing recordings and the final verdict')
    .option('--rules-root <dir...>', "another directory the rule file's extends may read from");
}

/** The values of readOptions, as the commands' option objects name them. */
function readValues(o: Record<string, unknown>) {
  return {
    sidecar: o.sidecar as string | undefined,
    channelTable: o.channelTable as string | undefined,
    sampleRate: o.sampleRate as number | undefined,
    decimalComma: o.decimalComma === true,
    jobs: o.jobs as number | undefined,
  };
}

/** The values of readOptions and reportOptions, as the commands' option objects name them. */
function readAndReportValues(o: Record<string, unknown>) {
  return {
    junit: o.junit as string | undefined,
    json: o.json as string | undefined,
    html: o.html as string | undefined,
    github: o.github === true,
    quiet: o.quiet === true,
    rulesRoots: o.rulesRoot as string[] | undefined,
    ...readValues(o),
  };
}

/**
 * The command line. Returns the exit code; never calls process.exit, never throws for bad
 * input (the message goes to io.stderr).
 */
export async function main(argv: string[], io: CliIo): Promise<number> {
  let code: number = ExitCode.ok;
  // `vibgate run ... -- COMMAND ARGS`: everything after the first "--" belongs to the command
  const dash = argv[0] === 'run' ? argv.indexOf('--') : -1;
  const ours = dash < 0 ? argv : argv.slice(0, dash);
  const downstream = dash < 0 ? [] : argv.slice(dash + 1);
  const program = new Command('vibgate')
    .description('Data-quality gate for vibration and acoustics recordings.')
    .version(tool.version, '-V, --version')
    .exitOverride()
    .configureOutput({
      writeOut: (s) => io.stdout.write(s),
      writeErr: (s) => io.stderr.write(s),
      outputError: (s, write) => write(s.startsWith('error:') ? `vibgate: ${s.slice(7)}` : s),
    })
    .showHelpAfterError('(run "vibgate --help" for usage)');

  readOptions(
    program
      .command('inspect')
      .description('Print per-channel statistics of recordings: whole record and the range over frames.')
      .argument('<recording...>', 'recording files (WAV/RF64/BW64, UFF 58, HDF5, CSV/TSV, raw; vibgate formats lists them)')
      .addOption(new Option('-f, --format <format>', 'output for people or tools').choices(['table', 'json', 'csv']).default('table'))
      .option('--frame-seconds <s>', 'frame length in seconds', positiveNumber('frame length'), 1)
      .option('--overlap <fraction>', 'fraction of a frame shared with the next (0 ≤ f < 1)', fraction, 0)
      .option('--time-column <name>', 'CSV: name of the time column'),
  )
    .action(async (paths: string[], opts: Record<string, unknown>) => {
      const options: InspectOptions = {
        format: opts.format as InspectOptions['format'],
        frameSeconds: opts.frameSeconds as number,
        overlap: opts.overlap as number,
        sidecar: opts.sidecar as string | undefined,
        channelTable: opts.channelTable as string | undefined,
        sampleRate: opts.sampleRate as number | undefined,
        timeColumn: opts.timeColumn as string | undefined,
        decimalComma: opts.decimalComma === true,
        jobs: opts.jobs as number | undefined,
      };
      code = await runInspect(paths, options, io);
    });

  readOptions(
    reportOptions(
      program
        .command('screen')
        .description('Judge recordings against a rule file: the gate. Exit 0 pass, 1 failed or unreadable, 2 usage or rule-file error.')
        .argument('<recording...>', 'recording files (WAV/RF64/BW64, UFF 58, HDF5, CSV/TSV, raw; vibgate formats lists them)')
        .requiredOption('-r, --rules <file>', 'rule file (YAML) for this kind of test, or bundled:NAME'),
    ).option('--max-warnings <n>', 'fail the gate when there are more than n warnings', nonNegativeInteger),
  )
    .option('--sign <key>', 'sign the JSON record with this Ed25519 private key (vibgate keys new)')
    .option('--ledger <file>', 'append the JSON record to this ledger (JSON Lines, hash-chained)')
    .option('--shard <i/n>', 'screen job i of n: a deterministic share of the recordings (docs/scale-out.md)')
    .option('--section <i/n>', 'with --partial: summarise section i of n of every recording')
    .option('--partial <file>', 'write a partial summary for vibgate merge instead of judging')
    .action(async (paths: string[], o: Record<string, unknown>) => {
      const { runScreenShare } = await import('./merge.js');
      const { parseShard } = await import('./shard.js');
      code = await runScreenShare(
        paths,
        {
          partial: o.partial as string | undefined,
          shard: o.shard === undefined ? undefined : parseShard(o.shard as string, '--shard'),
          section: o.section === undefined ? undefined : parseShard(o.section as string, '--section'),
          ...readAndReportValues(o),
          rules: o.rules as string,
          maxWarnings: o.maxWarnings as number | undefined,
          sign: o.sign as string | undefined,
          ledger: o.ledger as string | undefined,
        },
        io,
      );
    });

  reportOptions(
    program
      .command('merge')
      .description('Combine partial summaries (screen --partial) exactly and judge the whole campaign once: the same reports and exit codes as one screen run.')
      .argument('<part...>', 'partial-summary files written by vibgate screen --partial')
      .option('-r, --rules <file>', 'the rule file, when it is not where the jobs read it (its SHA-256 must match)'),
  )
    .option('--max-warnings <n>', 'fail the gate when there are more than n warnings', nonNegativeInteger)
    .action(async (parts: string[], o: Record<string, unknown>) => {
      const { runMerge } = await import('./merge.js');
      code = await runMerge(parts, io, {
        rules: o.rules as string | undefined,
        junit: o.junit as string | undefined,
        json: o.json as string | undefined,
        html: o.html as string | undefined,
        github: o.github === true,
        quiet: o.quiet === true,
        maxWarnings: o.maxWarnings as number | undefined,
        rulesRoots: o.rulesRoot as string[] | undefined,
      });
    });

  readOptions(
    reportOptions(
      program
        .command('run')
        .usage('--rules <file> [options] <recording...> -- <command> [args...]')
        .description('Screen, then run a command on the recordings that passed (their paths appended, or put where {} stands); its exit code is passed through.')
        .argument('<recording...>', 'recording files')
        .requiredOption('-r, --rules <file>', 'rule file (YAML) for this kind of test, or bundled:NAME'),
      'write the JSON audit record, with the recordings handed on and held back',
    ),
  )
    .action(async (paths: string[], o: Record<string, unknown>) => {
      const { runGated } = await import('./run.js');
      code = await runGated(paths, io, {
        ...readAndReportValues(o),
        rules: o.rules as string,
        command: downstream,
      });
    });

  readOptions(
    program
      .command('learn')
      .description(
        'Write a rule file whose limits are learned from recordings known to be good (docs/learning.md). ' +
          'Exit 0 written, 1 a recording unreadable or a file unwritable, 2 usage, rule-file error or too little data.',
      )
      .argument('[recording...]', 'recordings known to be good (at least 3; the formats screen reads)')
      .requiredOption('-o, --output <file>', 'rule file to write; its evidence goes to <file>.evidence.json')
      .option('--extends <file>', 'base rule file the learned limits go on top of, or bundled:NAME (default bundled:base)')
      .addOption(new Option('--by <grouping>', 'learn limits per channel name, per sensor type, or over all channels (default channel)').choices(['channel', 'sensor', 'all']))
      .option('--margin <k>', 'limit = median ± k × spread, spread = 1.4826 × MAD (default 8)', positiveNumber('margin'))
      .option('--name <name>', "the rule file's name (default: its file name without .yaml)")
      .option(
        '--checks <ids>',
        'comma-separated checks to learn (default mean-offset,symmetry,skewness,kurtosis,crest-factor,frame-rms-spread; rms-level with --by channel)',
        (v: string) => v.split(',').map((s) => s.trim()).filter(Boolean),
      )
      .option('--update', 'add the recordings to the evidence of an existing learned file and learn again (settings default to its own)')
      .option('--force', 'replace an existing rule file and its evidence')
      .option('--rules-root <dir...>', "another directory the base's extends may read from"),
  ).action(async (paths: string[], o: Record<string, unknown>) => {
    const { runLearn } = await import('./learn.js');
    code = await runLearn(
      paths,
      {
        output: o.output as string,
        extends: o.extends as string | undefined,
        by: o.by as 'channel' | 'sensor' | 'all' | undefined,
        margin: o.margin as number | undefined,
        name: o.name as string | undefined,
        checks: o.checks as string[] | undefined,
        update: o.update === true,
        force: o.force === true,
        rulesRoots: o.rulesRoot as string[] | undefined,
        ...readValues(o),
      },
      io,
    );
  });

  program
    .command('verify')
    .description('Check a JSON record: its signature, that its recordings and rule files are unchanged, its ledger entry. Exit 0 all hold, 1 something differs, 2 unreadable.')
    .argument('<record>', 'JSON record written by vibgate screen --json')
    .option('--key <pub>', 'the trusted public key: the record must be signed with it')
    .option('--ledger <file>', 'the ledger the record must be in; its chain is checked end to end')
    .option('--dir <dir>', "directory the screening ran in (the record's relative paths start there)")
    .option('--json', 'print the findings as JSON')
    .action(async (record: string, o: { key?: string; ledger?: string; dir?: string; json?: boolean }) => {
      const { runVerify } = await import('./verify.js');
      code = await runVerify(record, io, { key: o.key, ledger: o.ledger, dir: o.dir, json: o.json === true });
    });

  program
    .command('keys')
    .description('Signing keys for JSON records.')
    .command('new')
    .description('Make an Ed25519 key pair: <out>.key (private, mode 0600) and <out>.pub. Never overwrites.')
    .requiredOption('--out <name>', 'file name without extension')
    .action(async (o: { out: string }) => {
      const { runKeysNew } = await import('./keys.js');
      code = await runKeysNew(io, { out: o.out });
    });

  program
    .command('formats')
    .description('List the recording formats vibgate reads, their extensions and how each is recognised.')
    .action(async () => {
      const { formats } = await import('../readers/detect.js');
      const rows = formats.map((f) => [f.name, f.extensions.join(' ') || '(any)', f.recognisedBy, f.description]);
      const width = (k: number) => Math.max(...rows.map((r) => r[k].length));
      for (const r of rows) io.stdout.write(`${r[0].padEnd(width(0))}  ${r[1].padEnd(width(1))}  ${r[3]}\n${' '.repeat(width(0) + width(1) + 4)}recognised by ${r[2]}\n`);
      io.stdout.write('Content decides over the extension; a sidecar <recording>.channels.yaml adds names, units and scaling to any format.\n');
    });

  const rules = program.command('rules').description('Validate rule files and list the checks.');
  rules
    .command('validate')
    .description('Validate a rule file and print it as vibgate resolves it (extends merged).')
    .argument('<file>', 'rule file (YAML)')
    .addOption(new Option('-f, --format <format>', 'output for people or tools').choices(['text', 'json']).default('text'))
    .option('--rules-root <dir...>', 'another directory extends may read from')
    .action(async (file: string, o: { format: 'text' | 'json'; rulesRoot?: string[] }) => {
      const { runRulesValidate } = await rulesModule();
      code = await runRulesValidate(file, io, { format: o.format, rulesRoots: o.rulesRoot });
    });
  rules
    .command('checks')
    .description('List every check with its options and defaults.')
    .action(async () => {
      const { runRulesChecks } = await rulesModule();
      code = runRulesChecks(io);
    });

  try {
    await program.parseAsync(ours, { from: 'user' });
    return code;
  } catch (err) {
    if (err instanceof CommanderError) {
      return err.exitCode === 0 ? ExitCode.ok : ExitCode.usage;
    }
    if (err instanceof UsageError || err instanceof RangeError) {
      io.stderr.write(`vibgate: ${err.message}\n`);
      return ExitCode.usage;
    }
    // A bug, not bad input: say so plainly, with the detail a developer needs.
    io.stderr.write(`vibgate: internal error: ${err instanceof Error ? err.stack ?? err.message : String(err)}\n`);
    return ExitCode.failed;
  }
}
