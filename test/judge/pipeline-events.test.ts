import { describe, expect, it } from 'vitest';
import { PipelineEvents } from '../../src/judge/pipeline-events.js';

// Source of truth: the contract in the doc comment of src/judge/pipeline-events.ts
// (listeners run synchronously in subscription order; a throwing listener stops the emit
// and the error reaches the caller). Payloads are literals of our own.

describe('PipelineEvents', () => {
  it('calls listeners of one event in subscription order, with the payload given', () => {
    const events = new PipelineEvents();
    const heard: string[] = [];
    events.on('record rejected', (p) => heard.push(`first ${p.reason} ${p.line}`));
    events.on('record rejected', (p) => heard.push(`second ${p.reason} ${p.line}`));
    events.on('source stalled', () => heard.push('stalled'));
    events.emit('record rejected', { reason: 'not JSON', line: 7 });
    expect(heard).toEqual(['first not JSON 7', 'second not JSON 7']);
  });

  it('tells whether an event is heard, before and after unsubscribing', () => {
    const events = new PipelineEvents();
    expect(events.listens('record rejected')).toBe(false);
    const off = events.on('record rejected', () => {});
    expect(events.listens('record rejected')).toBe(true);
    expect(events.listens('window closed')).toBe(false);
    off();
    expect(events.listens('record rejected')).toBe(false);
  });

  it('unsubscribes only the listener whose function is called', () => {
    const events = new PipelineEvents();
    const heard: number[] = [];
    const offA = events.on('source stalled', (p) => heard.push(p.quietMs));
    events.on('source stalled', (p) => heard.push(-p.quietMs));
    offA();
    offA();
    events.emit('source stalled', { quietMs: 1500, newestRecordTs: 0 });
    expect(heard).toEqual([-1500]);
  });

  it('emitting an event nobody listens to does nothing', () => {
    const events = new PipelineEvents();
    expect(() => events.emit('source stalled', { quietMs: 1, newestRecordTs: 2 })).not.toThrow();
  });

  it('a throwing listener stops the emit and the error reaches the caller', () => {
    const events = new PipelineEvents();
    const heard: string[] = [];
    events.on('record rejected', () => heard.push('before'));
    events.on('record rejected', () => {
      throw new Error('disk full');
    });
    events.on('record rejected', () => heard.push('after'));
    expect(() => events.emit('record rejected', { reason: 'too late' })).toThrow('disk full');
    expect(heard).toEqual(['before']);
  });

  it('a listener that unsubscribes during an emit does not skip the next one', () => {
    const events = new PipelineEvents();
    const heard: string[] = [];
    const off = events.on('record rejected', () => {
      heard.push('once');
      off();
    });
    events.on('record rejected', () => heard.push('always'));
    events.emit('record rejected', { reason: 'wrong type' });
    events.emit('record rejected', { reason: 'wrong type' });
    expect(heard).toEqual(['once', 'always', 'always']);
  });
});
