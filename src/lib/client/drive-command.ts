// One drive command sent from the live page and what to tell the operator about it. The Drive card
// and the drive strip at the top of the page both send through here, so a Stop from either goes the
// same way (POST …/commands, the server's role check) and is reported the same.
import type { CommandBody } from '../contract/wire.ts';
import { errorText, sendCommand } from './api.ts';

export interface CommandOutcome {
  ok: boolean;
  text: string;
}

/** Sends `cmd` to the bench's gateway; `what` names it in the message ("Stop", "Hold at 40 V"). Never throws. */
export async function sendDriveCommand(benchId: string, cmd: CommandBody, what: string): Promise<CommandOutcome> {
  try {
    const sent = await sendCommand(benchId, cmd);
    // The broker keeps nothing for an offline gateway (clean sessions): the command is lost.
    if (!sent.gatewayOnline) return { ok: false, text: `${what} not delivered: gateway ${sent.gateway} is offline. Send it again once it is back.` };
    return { ok: true, text: `${what}: sent to the gateway.` };
  } catch (err) {
    return { ok: false, text: `${what} refused: ${errorText(err)}` };
  }
}
