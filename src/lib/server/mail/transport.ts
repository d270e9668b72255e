import nodemailer from 'nodemailer';
import type SMTPTransport from 'nodemailer/lib/smtp-transport';
import { config, type Config } from '../config';

/** A nodemailer SMTP transport to the configured relay (AUTH only when SMTP_USER is set). */
export function createMailTransport(
  cfg: Pick<Config, 'SMTP_HOST' | 'SMTP_PORT' | 'SMTP_USER' | 'SMTP_PASS'> = config(),
): nodemailer.Transporter<SMTPTransport.SentMessageInfo> {
  return nodemailer.createTransport({
    host: cfg.SMTP_HOST,
    port: cfg.SMTP_PORT,
    // Implicit TLS on the submissions port; elsewhere STARTTLS when the relay offers it.
    secure: cfg.SMTP_PORT === 465,
    ...(cfg.SMTP_USER ? { auth: { user: cfg.SMTP_USER, pass: cfg.SMTP_PASS ?? '' } } : {}),
    // A relay that hangs must not hold the worker (and its row lock) for minutes.
    connectionTimeout: 10_000,
    greetingTimeout: 10_000,
    socketTimeout: 30_000,
  });
}
