import { describe, expect, it } from 'vitest';
import { ConfigError, loadConfig } from './config.js';

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
});
