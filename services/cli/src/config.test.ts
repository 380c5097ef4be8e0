import { describe, expect, it } from 'vitest';
import { anonymousRoleFor, ConfigError, loadConfig } from './config.js';

describe('loadConfig', () => {
  it('gives working defaults for an empty environment (embedded database)', () => {
    const config = loadConfig({});
    expect(config.databaseUrl).toBeUndefined();
    expect(config.port).toBe(8080);
    expect(config.host).toBe('127.0.0.1');
    expect(config.logFormat).toBe('json');
    expect(Object.isFrozen(config)).toBe(true);
  });

  it('reads DATABASE_URL, PORT and HOST', () => {
    const config = loadConfig({ DATABASE_URL: 'postgres://u@db:5432/plant', PORT: '9000', HOST: '0.0.0.0' });
    expect(config.databaseUrl).toBe('postgres://u@db:5432/plant');
    expect(config.port).toBe(9000);
    expect(config.host).toBe('0.0.0.0');
  });

  it('refuses bad values, naming every variable, the value given and what is allowed', () => {
    let error: unknown;
    try {
      loadConfig({ PORT: 'eighty', DATABASE_URL: 'mysql://x', LOG_LEVEL: 'loud' });
    } catch (caught) {
      error = caught;
    }
    expect(error).toBeInstanceOf(ConfigError);
    const problems = (error as ConfigError).problems;
    expect(problems.map((p) => p.variable).sort()).toEqual(['DATABASE_URL', 'LOG_LEVEL', 'PORT']);
    const message = (error as ConfigError).message;
    expect(message).toContain('PORT="eighty": must be a whole number');
    expect(message).toContain('DATABASE_URL="mysql://x": must be a PostgreSQL connection string');
    expect(message).toContain('LOG_LEVEL="loud": must be one of fatal, error');
  });

  it("reads the push route's own rate limit (issue 18 item 10), 3,000 a minute by default, 0 = none", () => {
    expect(loadConfig({}).ingestRateLimitPerMinute).toBe(3000);
    expect(loadConfig({ ISENTROPE_INGEST_RATE_LIMIT: '0' }).ingestRateLimitPerMinute).toBe(0);
    expect(() => loadConfig({ ISENTROPE_INGEST_RATE_LIMIT: '-1' })).toThrow(
      /ISENTROPE_INGEST_RATE_LIMIT="-1"/,
    );
  });

  it('refuses a port out of range', () => {
    expect(() => loadConfig({ PORT: '70000' })).toThrow(/PORT="70000": must be between 0 and 65535/);
  });

  it('treats an empty variable as unset', () => {
    expect(loadConfig({ DATABASE_URL: '' }).databaseUrl).toBeUndefined();
  });

  it('takes e-mail settings only all together', () => {
    expect(() => loadConfig({ ISENTROPE_SMTP_URL: 'smtp://mail.example.org' })).toThrow(
      /ISENTROPE_MAIL_FROM=\(unset\): e-mail alerts need/,
    );
    const config = loadConfig({
      ISENTROPE_SMTP_URL: 'smtp://mail.example.org',
      ISENTROPE_MAIL_FROM: 'isentrope@example.org',
      ISENTROPE_MAIL_TO: 'reliability@example.org',
    });
    expect(config.smtp?.to).toBe('reliability@example.org');
  });

  it('reads the stop deadline in seconds, 10 s by default', () => {
    expect(loadConfig({}).stopDeadlineMs).toBe(10_000);
    expect(loadConfig({ ISENTROPE_STOP_TIMEOUT: '2.5' }).stopDeadlineMs).toBe(2_500);
    expect(() => loadConfig({ ISENTROPE_STOP_TIMEOUT: '0' })).toThrow(
      /ISENTROPE_STOP_TIMEOUT="0": must be between 1 and 600 seconds/,
    );
  });

  it('refuses a webhook URL that is not a URL', () => {
    expect(() => loadConfig({ ISENTROPE_WEBHOOK_URL: 'not a url' })).toThrow(
      /ISENTROPE_WEBHOOK_URL="not a url"/,
    );
  });

  // Issue 18, item 1: nobody who has not signed in may change anything.
  it('allows at most the viewer role for anonymous visitors, the demo on loopback included', () => {
    expect(() => loadConfig({ ISENTROPE_ANONYMOUS_ROLE: 'engineer' })).toThrow(
      /ISENTROPE_ANONYMOUS_ROLE="engineer": must be none or viewer/,
    );
    const local = loadConfig({});
    expect(anonymousRoleFor(local, true)).toBe('viewer');
    expect(anonymousRoleFor(local, false)).toBe('none');
    expect(anonymousRoleFor(loadConfig({ HOST: '0.0.0.0' }), true)).toBe('none');
    expect(anonymousRoleFor(loadConfig({ ISENTROPE_ANONYMOUS_ROLE: 'none' }), true)).toBe('none');
  });

  it('reads the public host names, cookie, proxy and metrics settings', () => {
    const defaults = loadConfig({});
    expect(defaults.publicHosts).toEqual([]);
    expect(defaults.cookieSecure).toBe('auto');
    expect(defaults.trustProxy).toBeUndefined();
    expect(defaults.metricsToken).toBeUndefined();
    const set = loadConfig({
      ISENTROPE_PUBLIC_HOST: 'Historian.Plant.example, historian:8443',
      ISENTROPE_COOKIE_SECURE: 'always',
      ISENTROPE_TRUST_PROXY: '127.0.0.1, 10.0.0.0/8,::1',
      ISENTROPE_METRICS_TOKEN: 'metrics-token-0123456789abcdef',
    });
    expect(set.publicHosts).toEqual(['historian.plant.example', 'historian:8443']);
    expect(set.cookieSecure).toBe('always');
    expect(set.trustProxy).toEqual(['127.0.0.1', '10.0.0.0/8', '::1']);
    expect(set.metricsToken).toBe('metrics-token-0123456789abcdef');
    for (const bad of ['everyone', '1', '10.0.0.0/33'])
      expect(() => loadConfig({ ISENTROPE_TRUST_PROXY: bad })).toThrow(
        /ISENTROPE_TRUST_PROXY=".*": must be a comma-separated list of proxy addresses/,
      );
    expect(() => loadConfig({ ISENTROPE_PUBLIC_HOST: 'http://historian/' })).toThrow(
      /ISENTROPE_PUBLIC_HOST="http:\/\/historian\/": must be host names/,
    );
    expect(() => loadConfig({ ISENTROPE_COOKIE_SECURE: 'yes' })).toThrow(
      /ISENTROPE_COOKIE_SECURE="yes": must be auto, always or never/,
    );
  });
});
