/**
 * The job bodies of the analysis layer, as startJobs installs them:
 *  - alerts (each minute, after compute): the instrument step (gauge/absolute mix-ups found on
 *    the results the compute job wrote; a new or ended finding has the compute pass recompute the
 *    rows it covers, flagged), the analysis pass (baseline, drift series, machine
 *    status), then the alert pass, in that order, under the one lock of the 'alerts' job: the
 *    flags must be on the results before the drift statistics and the alert bands read them;
 *  - notifications (every 10 s): one drain of the outbox;
 *  - monthly (1st, 02:00 site time): the monthly export, only when config.monthly is given.
 */
import type pg from 'pg';
import type { Logger } from 'pino';
import { type AnalysisOptions, runAnalysisOnce } from '../analysis/job.js';
import { type GaugeAbsoluteJobOptions, runGaugeAbsoluteOnce } from '../instrument/gauge-absolute.js';
import { type MonthlyOptions, runMonthlyExport } from '../monthly/job.js';
import {
  ensureConfiguredTargets,
  type Mailer,
  runNotificationsOnce,
  type SenderOptions,
} from '../notifications/sender.js';
import { type AlertsOptions, runAlertsOnce } from './job.js';

export interface AnalysisJobsConfig {
  readonly webhookUrl?: string;
  readonly webhookSecret?: string;
  /** SMTP URL (nodemailer), sender and the address alerts go to. */
  readonly smtp?: { readonly url: string; readonly from: string; readonly to: string };
  readonly analysis?: Omit<AnalysisOptions, 'machineIds'>;
  /** Gauge/absolute step (services/jobs/src/instrument): trailing window and detector settings. */
  readonly instrument?: Omit<GaugeAbsoluteJobOptions, 'nowMs' | 'machineIds'>;
  readonly alerts?: Omit<AlertsOptions, 'nowMs' | 'machineIds'>;
  readonly notifications?: Omit<SenderOptions, 'nowMs' | 'webhookSecret' | 'mailer' | 'mailFrom'>;
  /** Present: schedule the monthly export (energy price optional). */
  readonly monthly?: Omit<MonthlyOptions, 'nowMs'>;
  /** A ready mail transport (tests: nodemailer's JSON transport); default one made from smtp.url. */
  readonly mailer?: Mailer;
}

export type JobBody = (tickMs: number) => Promise<unknown>;

/**
 * The configured webhook and email targets as notifications rows, made at start: the outbox
 * trigger fans an alert event out only to targets that exist when it is raised, so one raised
 * before the first notifications tick would otherwise reach nobody. The tick ensures them again.
 */
export function ensureTargetsOfConfig(pool: pg.Pool, config: AnalysisJobsConfig): Promise<void> {
  return ensureConfiguredTargets(pool, { webhookUrl: config.webhookUrl, emailTo: config.smtp?.to });
}

export function analysisJobBodies(deps: {
  readonly pool: pg.Pool;
  readonly config: AnalysisJobsConfig;
  readonly logger: Logger;
}): { alerts: JobBody; notifications: JobBody; monthly?: JobBody } {
  const { pool, config } = deps;
  const log = deps.logger.child({ module: 'alerts' });
  let mailer: Mailer | undefined = config.mailer;
  let targetsReady = false;
  const bodies: { alerts: JobBody; notifications: JobBody; monthly?: JobBody } = {
    alerts: async (tickMs) => {
      const instrument = await runGaugeAbsoluteOnce(pool, { ...config.instrument, nowMs: tickMs });
      for (const s of instrument.skipped)
        log.warn({ machineId: s.machineId, reason: s.reason }, 'gauge/absolute check skipped');
      const analysis = await runAnalysisOnce(pool, { ...config.analysis, nowMs: tickMs });
      for (const a of analysis)
        if (a.baseline.startsWith('failed'))
          log.warn({ machineId: a.machineId, fit: a.baseline }, 'baseline fit failed');
      const alerts = await runAlertsOnce(pool, { ...config.alerts, nowMs: tickMs });
      return {
        instrument: {
          standing: instrument.standing,
          dismissed: instrument.dismissed,
          reverted: instrument.reverted,
          recomputedRows: instrument.recomputedRows,
        },
        analysed: analysis.length,
        driftRows: analysis.reduce((s, a) => s + a.driftRows, 0),
        ...alerts,
      };
    },
    notifications: async (tickMs) => {
      if (!targetsReady) {
        await ensureTargetsOfConfig(pool, config);
        targetsReady = true;
      }
      if (mailer === undefined && config.smtp !== undefined) {
        const nodemailer = await import('nodemailer');
        mailer = nodemailer.createTransport(config.smtp.url);
      }
      return runNotificationsOnce(pool, {
        ...config.notifications,
        nowMs: tickMs,
        webhookSecret: config.webhookSecret,
        mailer,
        mailFrom: config.smtp?.from,
      });
    },
  };
  const monthly = config.monthly;
  if (monthly !== undefined)
    bodies.monthly = (tickMs) => runMonthlyExport(pool, { ...monthly, nowMs: tickMs });
  return bodies;
}
