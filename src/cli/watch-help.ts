import { kafkaOptionsHelp } from './kafka-options.js';
import { mergeOptionsHelp } from './merge-options.js';
import { prometheusOptionsHelp } from './prometheus-options.js';
import { maxAheadHelp } from './window-options.js';

/** `shardwise watch --help`: every option of watchOptions (a test holds it to that). */
export const watchHelp = `Usage: shardwise watch (--input FILE|- | --scenario NAME | --brokers H:P --topic T |
                       --brokers H:P --merge SUMMARY_TOPIC |
                       --prometheus URL --series SELECTOR --shard-label NAME) [options]

Judges every closed window of per-shard request counts against random placement.
On a terminal it draws the live screen (keys below); otherwise, and with --no-ui,
it prints one verdict per window as a JSON object on its own line (stdout). A
summary goes to stderr at the end. Verdicts are statistical evidence under the
null model they name, not certainty.

Source (exactly one):
  --input FILE|-          JSON Lines or CSV records (count reports, count batches,
                          request events; CSV needs a ts,shard[,count] header).
                          - reads standard input, which counts as live: while it
                          is quiet, windows close as event time is taken to move
                          on with the wall clock.
  --scenario NAME         a built-in simulated cluster: demo, chance, hotspot,
                          dead-shard, failover, zipf-keys, weighted, diurnal,
                          hot-key, biased-partitioner, keyed-failover
    --seed S              its seed, 0..4294967295 (default 1)
    --duration D          its length, e.g. 10m (default: with --pace fast the
                          scenario's suggested length, in real time until
                          interrupted)
    --start TIME          its first instant, ISO-8601 with a zone or epoch ms
                          (default: now, rounded down to a window boundary; with
                          --pace fast, now minus the duration, so the replay
                          ends at about now)
    --pace real-time|fast real-time releases each second of traffic once it
                          has passed (default); fast replays at full speed,
                          letting the metrics endpoint and the keys in between
                          batches
${prometheusOptionsHelp}
                          Polled every min(window, 5s): each rise of a counter
                          between two scrapes is one record stamped at the later
                          scrape (a drop is a counter reset, counted from zero;
                          a series' first sample is only a baseline), so window
                          totals are the counters' own increase. Records are
                          released in time order once every live series has been
                          scraped past them; verdicts trail the wall clock by the
                          poll, four scrape intervals and 1s (said at start). A
                          series more than 3 of its scrape intervals behind the
                          others is stopped: windows it leaves uncovered carry
                          "coverage" (missing series, complete false) and are said
                          on stderr, as are counter resets.
${kafkaOptionsHelp}
${mergeOptionsHelp}
  --offsets-only          with --brokers and --topic: read no message, only the
                          topic's end offsets (high watermarks), once just after each
                          hop boundary. The shards are the partitions ("0", "1", ...,
                          as --shard-from partition names them) and a partition's
                          load in a window is how far its end offset grew. Offsets
                          are an upper bound on records (transaction markers and
                          compaction); partitions added mid-run join the universe.
  --session-timeout D     group session timeout (default 30s): how long the broker
                          keeps the partitions of a watch that stopped without
                          leaving (killed, host lost), so a restart on the same
                          --group waits at most this long; brokers accept 6s and
                          up by default (group.min.session.timeout.ms)
  With --group, offsets are committed only below windows still open, so a restart
  resumes after the last judged window; --from applies only to partitions the
  group has no position for. With --shard-from partition the universe is the
  topic's partitions.

Shard universe:
  --shards N|A..B|a,b,c   declare the shards, equal shares: a count (ids 0..N-1),
                          a range with a prefix (s-0..s-63) or a list
  --shard-map FILE        declare the shards with relative weights (hash-range
                          sizes, capacities): CSV shard,weight or JSON {"s-0": 1}
  --max-shards N          most shards accepted (default 100000)
  Without either the universe grows as shards report; a shard that never
  reports is then invisible, so the cold tests are off and the output says so.
  Ids that stop reporting retire where a window closes (none for 10 windows,
  or absent while k reporting shards average ln(1000 k)+ requests, or the
  universe is full), so m counts the shards reporting now (retiredShards).
  A scenario declares its own shards and shares.

Windows:
  --window D              window length (default 10s)
  --hop D                 distance between window starts; must divide --window
                          (default: --window, tumbling windows)
  --lateness D            how long to wait for late records (default 2s)
${maxAheadHelp}
  Event time is kept per source partition (each Kafka partition; a file, stdin or
  a scenario is one): a window closes once every partition still reporting has
  passed its end plus the lateness, so records in order within their partition
  are never late. A live partition quiet for a window plus the lateness stops
  holding the others back (the verdict notes say so). A stretch of more than 360
  windows without records is skipped as one gap, reported, not judged.

Judging:
  --alpha A               significance level of every test (default 0.001)
  --min-excess X          a hotspot must also carry at least (1 + X) times its
                          fair share (default 0.2): at huge N a tiny excess is
                          significant and irrelevant
  --min-dispersion F      "uneven" needs the dispersion index phi above F
                          times the cluster's learned phi (F times 1, random
                          placement, in exact mode and while it learns;
                          default 1.5)
  --max-detectable F      "too little traffic" when the smallest detectable
                          hotspot is above F times the fair share (default 3)
  --null uniform|map|baseline
                          shares expected under random placement: equal, from
                          the shard map (or the scenario), or learned from the
                          trailing windows; default map with --shard-map or
                          --scenario, else uniform. With unequal hash ranges
                          only map (or baseline) is honest.
  --baseline N            baseline span in windows (default 60): exponentially
                          weighted counts, shrunk toward the declared shares by
                          a prior worth 100 requests per shard; the declared
                          shares are used until N/4 windows are learned; windows
                          with an open incident or a flagged shard are not
                          learned
  --spread exact|robust|auto
                          exact: multinomial tests as they are; robust: counts
                          divided by the cluster's usual spread, learned over
                          the last 60 windows (mean squared Pearson residual
                          per shard, shards that stand out and flagged ones
                          left out; its upper 95% bound, matched on the tail
                          of clumped counts, floored at 1), so only shards
                          that stand out from it are flagged and "uneven"
                          means beyond it (after 10 windows of learning);
                          auto (default): exact unless the spread test rejects
                          or the learned phi is surely above 1, then robust
                          (with 16 shards or more: with fewer, one hot shard
                          moves every residual)
  --confirm K             consecutive flagged windows that open an incident
                          (default 3); a window with too little traffic does not
                          count, and two in a row break the run. A CUSUM per
                          shard (design excess --min-excess, off at 0) also opens
                          one on a small excess that lasts, at the same false-
                          incident rate
  --clear J               consecutive clean windows that clear it (default 5),
                          or J x 10 windows in a row without a flag
  --max-flagged N         most shards listed per window (default 10); also the most
                          open incidents /metrics names by shard
  --judge-inline          judge on the thread that reads the records, not on a
                          second thread (the default when the shard set is
                          declared: --shards, --shard-map, a scenario, the
                          partitions of --offsets-only); the verdicts are the
                          same either way

Keys (request events with "key"; Kafka message keys with --shard-from partition):
  --no-keys               no key analysis
  --key-counters K        heavy-hitter counters per shard and window (Space-Saving;
                          default 16): a key's count is overstated by at most the
                          stated overestimate, at most requests / K
  --key-registers R       distinct-key registers per shard and window (HyperLogLog,
                          a power of two, 16..65536; default 4096): exact up to R/16
                          keys per shard, then a standard error of 1.04/sqrt(R)
  --key-simulations S     most re-placement simulations per window (default 1000;
                          also capped at 2e7 key placements per window)
  Each hot shard gets a cause: "hot key" (one key surely carries at least half of
  its excess), "moved" (a cold shard in the same window lost about what it gained)
  or "placement" (the excess is spread over many keys, or its key count is off).
  Memory per window at most shards x (K x 320 + R + 200) bytes.

Output:
  --no-ui                 JSON Lines on stdout instead of the live screen (also
                          what runs, after a notice on stderr, when stdout is
                          not a terminal)
  --record FILE           also write a recording for shardwise review: each
                          closed window's verdict with its full count vector and
                          the settings, one JSON line per window, written to the
                          file before the next verdict is out (no fsync), so a
                          run stopped mid-write leaves at most a torn last line,
                          which review skips with a note. FILE is replaced.
  --record-max-size S     rotate the recording once it would pass S bytes
                          (default 1GiB; e.g. 500MB, 64MiB, at least 4096):
                          FILE moves to FILE.1, replacing an older FILE.1, and a
                          fresh FILE starts with the shard ids again, so disk use
                          stays below 2 x S
  --metrics-port P        serve Prometheus metrics on /metrics, with /healthz and
                          /readyz, on port P (default 9464; 0 picks a free port);
                          the address is printed on stderr
  --metrics-host H        address to bind (default 127.0.0.1: loopback only)
  --no-metrics            no metrics endpoint

Live screen: the verdict on the newest closed window with its evidence, the
flagged and fullest shards drawn against the chance ceiling, the spread of loads
beside what random placement predicts, the recent windows, open incidents and
the source. It stays up when the input ends. Keys:
  p, space                pause / resume (windows are still judged while paused)
  left/right, [ ]         step back / forward through the last 360 windows
  s                       sort the shard rows: evidence, load, shard id
  ?, h                    help (Esc closes it)
  q, Ctrl+C               quit; the terminal is restored

Findings per window: hotspot, cold, uneven, chance, too little traffic; cold and
hotspot together are named pattern "failover". Exit status: 0 when the input
was read to its end (or the run was interrupted; an empty input says so), 2 for
bad usage, 1 for a failure while running or when every record of the input was
rejected (the summary names the first line of each kind of rejection).
`;
