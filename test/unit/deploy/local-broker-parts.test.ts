import { describe, expect, it } from 'vitest';

import { parseJavaMajor } from '../../../deploy/kafka/prerequisites.js';
import { randomClusterId, renderServerProperties } from '../../../deploy/kafka/server-properties.js';

describe('renderServerProperties', () => {
  const text = renderServerProperties({ clientPort: 40001, controllerPort: 40002, logDir: '/tmp/run/data' });
  const settings = new Map(text.trim().split('\n').map((line) => line.split('=', 2) as [string, string]));

  it('binds both listeners to 127.0.0.1 only, never to every interface', () => {
    expect(settings.get('listeners')).toBe('PLAINTEXT://127.0.0.1:40001,CONTROLLER://127.0.0.1:40002');
    expect(settings.get('controller.quorum.voters')).toBe('1@127.0.0.1:40002');
  });

  it('gives the internal topics one replica, as a single broker requires', () => {
    for (const key of ['offsets.topic.replication.factor', 'transaction.state.log.replication.factor', 'transaction.state.log.min.isr',
      'share.coordinator.state.topic.replication.factor', 'share.coordinator.state.topic.min.isr']) {
      expect(settings.get(key), key).toBe('1');
    }
  });
});

describe('randomClusterId', () => {
  it("has Kafka's Uuid text form: 16 bytes as 22 characters of URL-safe base64, no padding", () => {
    const id = randomClusterId();
    expect(id).toMatch(/^[A-Za-z0-9_-]{22}$/);
    expect(Buffer.from(id, 'base64url')).toHaveLength(16);
  });

  it("re-draws ids starting with '-' (Kafka's own generator does the same)", () => {
    const draws = [Buffer.from([0xf8, ...new Array<number>(15).fill(0)]), Buffer.alloc(16, 1)];
    const id = randomClusterId(() => draws.shift() as Buffer);
    expect(id).toBe(Buffer.alloc(16, 1).toString('base64url'));
  });
});

describe('parseJavaMajor', () => {
  // Banner first lines as printed by OpenJDK builds (Debian's 17, and the old 1.x scheme of Java 8).
  it.each([
    ['openjdk version "17.0.15" 2025-04-15', 17],
    ['openjdk version "21.0.2" 2024-01-16', 21],
    ['openjdk version "1.8.0_392"', 8],
    ['java version "22" 2024-03-19', 22],
    ['no version here', undefined],
  ])('%s → %s', (banner, major) => {
    expect(parseJavaMajor(banner)).toBe(major);
  });
});
