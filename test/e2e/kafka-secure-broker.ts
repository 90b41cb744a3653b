// A second, short-lived Kafka node for the security tests: SASL (PLAIN, SCRAM-SHA-256,
// SCRAM-SHA-512) on a plaintext listener and on a TLS listener whose certificate a
// throw-away CA signs. It runs the test broker's version (SHARDWISE_KAFKA_VERSION) from the
// jars scripts/kafka-broker.sh assembles, in a temporary folder, on free ports, with static
// controller voters (both 3.x and 4.x take them), and is stopped by the test.
import { execFile, spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync, readFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { Kafka, logLevel, type SASLOptions } from 'kafkajs';
import { kafkaLibsDir, kafkaVersion } from './kafka-env.js';

const run = promisify(execFile);

/** Users the broker knows, by mechanism. Test-only secrets. */
export const secureUsers = {
  plain: { username: 'alice', password: 'alice-plain-secret' },
  'scram-sha-256': { username: 'bob', password: 'bob-256-secret' },
  'scram-sha-512': { username: 'carol', password: 'carol-512-secret' },
} as const;

function libsDir(): string {
  const libs = kafkaLibsDir();
  if (!existsSync(join(libs, '.complete'))) {
    throw new Error(
      `the Kafka ${kafkaVersion()} jars are not in ${libs}; run bash scripts/kafka-broker.sh start once to assemble them (needs Java 17 and Maven)`,
    );
  }
  return libs;
}

/** Logging to `server.log` in `directory`: log4j2 from Kafka 4 on, log4j 1 (reload4j) before. */
function loggingOptions(directory: string): string[] {
  const log = join(directory, 'server.log');
  if (Number(kafkaVersion().split('.')[0]) >= 4) {
    const config = join(directory, 'log4j2.properties');
    writeFileSync(
      config,
      [
        'appender.file.type = File',
        'appender.file.name = file',
        `appender.file.fileName = ${log}`,
        'appender.file.layout.type = PatternLayout',
        'appender.file.layout.pattern = [%d] %p %m (%c)%n',
        'rootLogger.level = WARN',
        'rootLogger.appenderRef.file.ref = file',
      ].join('\n') + '\n',
    );
    return [`-Dlog4j2.configurationFile=${config}`];
  }
  const config = join(directory, 'log4j.properties');
  writeFileSync(
    config,
    [
      'log4j.rootLogger=WARN, file',
      'log4j.appender.file=org.apache.log4j.FileAppender',
      `log4j.appender.file.File=${log}`,
      'log4j.appender.file.layout=org.apache.log4j.PatternLayout',
      'log4j.appender.file.layout.ConversionPattern=[%d] %p %m (%c)%n',
    ].join('\n') + '\n',
  );
  return [`-Dlog4j.configuration=file:${config}`];
}

async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const server = createServer();
    server.once('error', reject);
    server.listen(0, '127.0.0.1', () => {
      const address = server.address();
      server.close(() =>
        typeof address === 'object' && address !== null
          ? resolve(address.port)
          : reject(new Error('no port')),
      );
    });
  });
}

/** A running secure broker; {@link stop} it in the test's cleanup. */
export class SecureBroker {
  private constructor(
    private readonly child: ChildProcess,
    private readonly directory: string,
    /** `127.0.0.1:port` of the SASL listener without TLS. */
    readonly saslPlaintext: string,
    /** `127.0.0.1:port` of the SASL listener with TLS. */
    readonly saslTls: string,
    /** Path of the PEM file of the CA that signed the TLS listener's certificate. */
    readonly caFile: string,
  ) {}

  /** Assembles the certificates and the config, formats, starts and waits until a login works. */
  static async start(): Promise<SecureBroker> {
    const libs = libsDir();
    const directory = mkdtempSync(join(tmpdir(), 'shardwise-secure-broker-'));
    const [plainPort, tlsPort, controllerPort] = [
      await freePort(),
      await freePort(),
      await freePort(),
    ];
    const openssl = (args: string[]) => run('openssl', args, { cwd: directory });
    await openssl([
      'req',
      '-x509',
      '-newkey',
      'rsa:2048',
      '-nodes',
      '-keyout',
      'ca.key',
      '-out',
      'ca.pem',
      '-days',
      '2',
      '-subj',
      '/CN=shardwise-test-ca',
    ]);
    await openssl([
      'req',
      '-newkey',
      'rsa:2048',
      '-nodes',
      '-keyout',
      'server.key',
      '-out',
      'server.csr',
      '-subj',
      '/CN=127.0.0.1',
    ]);
    writeFileSync(join(directory, 'san.ext'), 'subjectAltName=IP:127.0.0.1\n');
    await openssl([
      'x509',
      '-req',
      '-in',
      'server.csr',
      '-CA',
      'ca.pem',
      '-CAkey',
      'ca.key',
      '-CAcreateserial',
      '-out',
      'server.crt',
      '-days',
      '2',
      '-extfile',
      'san.ext',
    ]);
    writeFileSync(
      join(directory, 'server.pem'),
      readFileSync(join(directory, 'server.key'), 'utf8') +
        readFileSync(join(directory, 'server.crt'), 'utf8'),
    );
    const plainJaas =
      'org.apache.kafka.common.security.plain.PlainLoginModule required username="admin" password="admin-secret" ' +
      `user_admin="admin-secret" user_${secureUsers.plain.username}="${secureUsers.plain.password}";`;
    const scramJaas = 'org.apache.kafka.common.security.scram.ScramLoginModule required;';
    const lines = [
      'process.roles=broker,controller',
      'node.id=1',
      `controller.quorum.voters=1@127.0.0.1:${controllerPort}`,
      `listeners=SASL_PLAINTEXT://127.0.0.1:${plainPort},SASL_SSL://127.0.0.1:${tlsPort},CONTROLLER://127.0.0.1:${controllerPort}`,
      `advertised.listeners=SASL_PLAINTEXT://127.0.0.1:${plainPort},SASL_SSL://127.0.0.1:${tlsPort}`,
      'controller.listener.names=CONTROLLER',
      'listener.security.protocol.map=CONTROLLER:PLAINTEXT,SASL_PLAINTEXT:SASL_PLAINTEXT,SASL_SSL:SASL_SSL',
      'inter.broker.listener.name=SASL_PLAINTEXT',
      'sasl.enabled.mechanisms=PLAIN,SCRAM-SHA-256,SCRAM-SHA-512',
      'sasl.mechanism.inter.broker.protocol=PLAIN',
      ...['sasl_plaintext', 'sasl_ssl'].flatMap((listener) => [
        `listener.name.${listener}.plain.sasl.jaas.config=${plainJaas}`,
        `listener.name.${listener}.scram-sha-256.sasl.jaas.config=${scramJaas}`,
        `listener.name.${listener}.scram-sha-512.sasl.jaas.config=${scramJaas}`,
      ]),
      'listener.name.sasl_ssl.ssl.keystore.type=PEM',
      `listener.name.sasl_ssl.ssl.keystore.location=${join(directory, 'server.pem')}`,
      `log.dirs=${join(directory, 'data')}`,
      'num.partitions=1',
      'offsets.topic.replication.factor=1',
      'offsets.topic.num.partitions=1',
      'transaction.state.log.replication.factor=1',
      'transaction.state.log.min.isr=1',
      'group.initial.rebalance.delay.ms=0',
      'auto.create.topics.enable=false',
      'log.retention.ms=-1',
      'num.network.threads=1',
      'num.io.threads=1',
    ];
    const config = join(directory, 'server.properties');
    writeFileSync(config, lines.join('\n') + '\n');
    const java = ['-Xms256m', '-Xmx256m', ...loggingOptions(directory), '-cp', `${libs}/*`];
    const { stdout: clusterId } = await run('java', [
      ...java,
      'kafka.tools.StorageTool',
      'random-uuid',
    ]);
    await run('java', [
      ...java,
      'kafka.tools.StorageTool',
      'format',
      '-t',
      clusterId.trim().split('\n').pop() as string,
      '-c',
      config,
      '--add-scram',
      `SCRAM-SHA-256=[name=${secureUsers['scram-sha-256'].username},password=${secureUsers['scram-sha-256'].password}]`,
      '--add-scram',
      `SCRAM-SHA-512=[name=${secureUsers['scram-sha-512'].username},password=${secureUsers['scram-sha-512'].password}]`,
    ]);
    const child = spawn('java', [...java, '-XX:+UseSerialGC', 'kafka.Kafka', config], {
      stdio: 'ignore',
    });
    const broker = new SecureBroker(
      child,
      directory,
      `127.0.0.1:${plainPort}`,
      `127.0.0.1:${tlsPort}`,
      join(directory, 'ca.pem'),
    );
    try {
      await broker.waitUntilReady();
    } catch (error) {
      await broker.stop();
      throw error;
    }
    return broker;
  }

  /** An admin-capable kafkajs client on the plaintext SASL listener. */
  adminClient(): Kafka {
    return new Kafka({
      clientId: 'shardwise-e2e-secure',
      brokers: [this.saslPlaintext],
      sasl: { mechanism: 'plain', username: 'admin', password: 'admin-secret' } as SASLOptions,
      logLevel: logLevel.NOTHING,
      retry: { retries: 3, initialRetryTime: 200 },
    });
  }

  async stop(): Promise<void> {
    if (this.child.exitCode === null && this.child.signalCode === null) {
      const exited = new Promise((resolve) => this.child.once('exit', resolve));
      this.child.kill('SIGTERM');
      const timer = setTimeout(() => this.child.kill('SIGKILL'), 15_000);
      await exited;
      clearTimeout(timer);
    }
    rmSync(this.directory, { recursive: true, force: true });
  }

  private async waitUntilReady(): Promise<void> {
    const started = Date.now();
    let lastError: unknown = null;
    while (Date.now() - started < 90_000) {
      if (this.child.exitCode !== null) {
        const log = existsSync(join(this.directory, 'server.log'))
          ? readFileSync(join(this.directory, 'server.log'), 'utf8').slice(-3000)
          : '';
        throw new Error(`the secure test broker exited with ${this.child.exitCode}:\n${log}`);
      }
      const admin = this.adminClient().admin();
      try {
        await admin.connect();
        await admin.listTopics();
        // Ready for consumer groups too: a fresh Kafka 4.4.0 node answers the first group
        // requests with COORDINATOR_LOAD_IN_PROGRESS while it loads its offsets topic.
        await admin.fetchOffsets({ groupId: 'shardwise-e2e-ready-probe', topics: [] });
        await admin.disconnect();
        return;
      } catch (error) {
        lastError = error;
        await admin.disconnect().catch(() => undefined);
        await new Promise((resolve) => setTimeout(resolve, 500));
      }
    }
    throw new Error(
      `the secure test broker did not accept a SASL login and a group request within 90 s: ${String(lastError)}`,
    );
  }
}
