// Readiness and ACLs of the secure local broker: waits until the admin user can log in over
// SASL_SSL and create a topic, then grants the prefixed ACLs of the monitor and operator users.
// Idempotent: creating an ACL that exists changes nothing.
//
//   node secure-acls.mjs --brokers 127.0.0.1:19092 --ca ca.pem --admin-password-file admin.pw [--pid N] [--timeout S]
/* global process, console, setTimeout */
import { readFileSync } from 'node:fs';
import kafkajs from 'kafkajs';

const { AclOperationTypes, AclPermissionTypes, AclResourceTypes, Kafka, logLevel, ResourcePatternTypes } =
  kafkajs;

const a = {};
for (let i = 2; i < process.argv.length; i += 2) a[process.argv[i].replace(/^--/, '')] = process.argv[i + 1];
const timeoutMs = Number(a.timeout ?? 120) * 1000;
const kafka = new Kafka({
  clientId: 'streamfence-stack-secure',
  brokers: [a.brokers],
  ssl: { ca: [readFileSync(a.ca)] },
  sasl: {
    mechanism: 'scram-sha-512',
    username: 'admin',
    password: readFileSync(a['admin-password-file'], 'utf8').trim(),
  },
  logLevel: logLevel.NOTHING,
  connectionTimeout: 3000,
  retry: { retries: 0 },
});

const alive = (pid) => {
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
};

const R = ResourcePatternTypes.PREFIXED;
const allow = (user, resourceType, resourceName, operation) => ({
  resourceType,
  resourceName,
  resourcePatternType: R,
  principal: `User:${user}`,
  host: '*',
  operation,
  permissionType: AclPermissionTypes.ALLOW,
});
const T = AclResourceTypes.TOPIC;
const G = AclResourceTypes.GROUP;
const O = AclOperationTypes;
const ACLS = [
  // monitor: read sf-in-*, write sf-alerts-* and sf-rejected-*, use groups sf-*
  allow('monitor', T, 'sf-in-', O.READ),
  allow('monitor', T, 'sf-in-', O.DESCRIBE),
  allow('monitor', T, 'sf-alerts-', O.WRITE),
  allow('monitor', T, 'sf-alerts-', O.DESCRIBE),
  allow('monitor', T, 'sf-rejected-', O.WRITE),
  allow('monitor', T, 'sf-rejected-', O.DESCRIBE),
  allow('monitor', G, 'sf-', O.READ),
  allow('monitor', G, 'sf-', O.DESCRIBE),
  // operator: read sf-alerts-*, read and write sf-actions-*, use groups sf-*
  allow('operator', T, 'sf-alerts-', O.READ),
  allow('operator', T, 'sf-alerts-', O.DESCRIBE),
  allow('operator', T, 'sf-actions-', O.READ),
  allow('operator', T, 'sf-actions-', O.WRITE),
  allow('operator', T, 'sf-actions-', O.DESCRIBE),
  allow('operator', G, 'sf-', O.READ),
  allow('operator', G, 'sf-', O.DESCRIBE),
  allow('operator', G, 'sf-', O.DELETE),
  // The viewer groups board and alerts make for themselves (they never commit), and the throwaway
  // group of `replay kafka://` (deleted at the end): same rights, on those name prefixes only.
  ...['streamfence-alerts-view-', 'streamfence-board-view-'].flatMap((g) => [
    allow('operator', G, g, O.READ),
    allow('operator', G, g, O.DESCRIBE),
  ]),
  allow('monitor', G, 'streamfence-replay-', O.READ),
  allow('monitor', G, 'streamfence-replay-', O.DESCRIBE),
  allow('monitor', G, 'streamfence-replay-', O.DELETE),
];

const deadline = Date.now() + timeoutMs;
let last = 'no answer';
for (;;) {
  if (a.pid && !alive(Number(a.pid))) {
    console.error('secure-acls: the broker exited during start-up');
    process.exit(1);
  }
  const admin = kafka.admin();
  try {
    await admin.connect();
    const topics = await admin.listTopics();
    if (!topics.includes('streamfence.stack.ready'))
      await admin.createTopics({ topics: [{ topic: 'streamfence.stack.ready' }], waitForLeaders: true });
    await admin.createAcls({ acl: ACLS });
    await admin.disconnect();
    console.log(`secure-acls: ${a.brokers} ready, ${ACLS.length} ACLs in place`);
    process.exit(0);
  } catch (e) {
    last = e instanceof Error ? e.message : String(e);
    await admin.disconnect().catch(() => {});
  }
  if (Date.now() > deadline) {
    console.error(`secure-acls: not ready after ${timeoutMs / 1000} s: ${last}`);
    process.exit(1);
  }
  await new Promise((r) => setTimeout(r, 500));
}
