import { describe, expect, it } from 'vitest';
import { hostAllowed, splitHost } from './host-rule.js';
import { isOddPath } from './request-screen.js';

describe('Host rule (DNS-rebinding guard)', () => {
  const loopback = { publicHosts: [], listenHost: '127.0.0.1' };
  const wide = { publicHosts: ['historian.plant.example', 'scada-gw:8443'], listenHost: '0.0.0.0' };

  it('answers loopback names with any port, nothing else, when listening on loopback', () => {
    for (const host of ['localhost', 'localhost:8080', '127.0.0.1:1', '[::1]:8080', 'LocalHost:80'])
      expect([host, hostAllowed(host, loopback)]).toEqual([host, true]);
    for (const host of ['attacker.example:8080', '10.0.0.5:8080', 'localhost.attacker.example', '', 'a b'])
      expect([host, hostAllowed(host, loopback)]).toEqual([host, false]);
    expect(hostAllowed(undefined, loopback)).toBe(false);
  });

  it('answers configured names (a port given must match) and address literals beyond loopback', () => {
    for (const host of [
      'historian.plant.example',
      'historian.plant.example:8080',
      'scada-gw:8443',
      '10.0.0.5:8080',
      '[fd00::5]:80',
    ])
      expect([host, hostAllowed(host, wide)]).toEqual([host, true]);
    for (const host of ['scada-gw:8080', 'scada-gw', 'attacker.example', 'plant.example'])
      expect([host, hostAllowed(host, wide)]).toEqual([host, false]);
  });

  it('splits names, IPv6 literals and ports', () => {
    expect(splitHost('[::1]:8080')).toEqual({ name: '[::1]', port: '8080' });
    expect(splitHost('Example.org')).toEqual({ name: 'example.org', port: undefined });
    expect(splitHost('a:b:c')).toBeUndefined();
  });
});

describe('odd paths', () => {
  it('finds doubled slashes, dot segments (also encoded), encoded separators and NUL', () => {
    for (const path of [
      '//api/health',
      '/%2e%2e/x',
      '/a/%2E/b',
      '/..',
      '/a/../b',
      '/a%2fb',
      '/a%5cb',
      '/a\\b',
      '/%00',
      'api',
    ])
      expect([path, isOddPath(path)]).toEqual([path, true]);
    for (const path of [
      '/',
      '/api/health',
      '/js/app.js',
      '/vendor/uplot/uPlot.min.css',
      '/api/x?next=../..',
      '/a..b/.c',
    ])
      expect([path, isOddPath(path)]).toEqual([path, false]);
  });
});
