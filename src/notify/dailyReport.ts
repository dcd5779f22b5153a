/** The daily proof-of-life report and the start/stop mails, in one place for the daemon. */
export { nextReportAt } from './nextReportAt.js';
export {
  composeDailyReport,
  REPORT_DEAD_MAN_LINE,
  REPORT_PERIOD_MS,
  type DailyReportData,
  type ReportAlarm,
  type ReportDecoder,
  type ReportLoop,
} from './composeDailyReport.js';
export { composeLifecycleMail, type LifecycleData, type LifecycleEvent } from './composeLifecycleMail.js';
