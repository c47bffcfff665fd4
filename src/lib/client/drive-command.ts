// One drive command sent from the live page and what to tell the operator about it. The Drive card
// and the drive strip at the top of the page both send through here, so a Stop from either goes the
// same way (POST …/commands, the server's role check) and is reported the same, with the gateway's
// own answer: a gateway without a drive (serial, replay) or one whose reach ends short refuses.
import type { CommandBody } from '../contract/wire.ts';
import { errorText, sendCommand } from './api.ts';
import { liveAnswers, type AnswerSource } from './command-answers.ts';

export interface CommandOutcome {
  ok: boolean;
  text: string;
}

/** How long the page waits for the gateway's answer, ms; a gateway answers as it takes a command, within milliseconds here. */
const ANSWER_WAIT_MS = 5_000;

/** Sends `cmd` to the bench's gateway; `what` names it in the message ("Stop", "Hold at 40 V"). Never throws. */
export async function sendDriveCommand(benchId: string, cmd: CommandBody, what: string, answers: AnswerSource = liveAnswers(benchId)): Promise<CommandOutcome> {
  const listener = answers();
  try {
    const sent = await sendCommand(benchId, cmd);
    // The broker keeps nothing for an offline gateway (clean sessions): the command is lost.
    if (!sent.gatewayOnline) return { ok: false, text: `${what} not delivered: gateway ${sent.gateway} is offline. Send it again once it is back.` };
    const answer = await listener.answer(sent.id, ANSWER_WAIT_MS);
    if (!answer) return { ok: true, text: `${what}: sent to ${sent.gateway}, which has not answered yet.` };
    if (!answer.ok) return { ok: false, text: `${what} refused by ${sent.gateway}: ${answer.error ?? 'it gave no reason'}.` };
    return { ok: true, text: `${what}: accepted by ${sent.gateway}.` };
  } catch (err) {
    return { ok: false, text: `${what} refused: ${errorText(err)}` };
  } finally {
    listener.close();
  }
}
