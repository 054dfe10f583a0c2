/**
 * The `cohort-export` job (issue 14): one export row, one archive in object storage. The work is in
 * lib/services/cohort-export.ts (`runCohortExport`); this wires the queue to it: the payload parsed
 * again (a bad one is an UnrecoverableError), the job's AbortSignal (the worker closing) passed on,
 * the last attempt marked final (the row becomes failed), and the e-mailed notice with a signed
 * link. A retried attempt writes the same object key, so no second file appears.
 */
import { createElement } from 'react';
import type { Job } from 'bullmq';
import { parseJobData, JOBS } from '@/lib/queue';
import { sendMail } from '@/lib/mail/mailer';
import { CohortExportReadyEmail } from '@/lib/mail/templates/CohortExportReadyEmail';
import { downloadPath } from '@/lib/services/cohorts';
import { runCohortExport, type ExportContext } from '@/lib/services/cohort-export';
import { DOWNLOAD_LINK_TTL_SECONDS } from '@/lib/security/download-token';

export interface CohortJobContext extends Omit<ExportContext, 'notify'> {
  appUrl: string;
  /** send the notice (default: the app's mailer) */
  sendNotice?: boolean;
}

export function exportNotifier(appUrl: string): NonNullable<ExportContext['notify']> {
  return async (n) => {
    const url = new URL(downloadPath(n.exportId, n.practiceId), appUrl).toString();
    await sendMail({
      to: n.to,
      subject: `Your anonymised export of ${n.cohortName} is ready`,
      template: createElement(CohortExportReadyEmail, { url, cohortName: n.cohortName, version: n.version, expiresInDays: Math.round(DOWNLOAD_LINK_TTL_SECONDS / 86_400) }),
    });
  };
}

export async function processCohortExport(ctx: CohortJobContext, job: Job, _token?: string, signal?: AbortSignal) {
  const data = parseJobData(JOBS.cohortExport, job.data);
  const final = job.attemptsMade + 1 >= (job.opts.attempts ?? 1);
  const outcome = await runCohortExport({ ...ctx, notify: ctx.sendNotice === false ? undefined : exportNotifier(ctx.appUrl) }, data.exportId, { signal, final });
  return { outcome };
}
