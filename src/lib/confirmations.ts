// What is asked before a change that cannot be taken back with a click: the question, what will
// happen, and the words on the button that does it. One wording for the dialog in the browser and
// the server's confirm step (pages without JavaScript). Pure: safe to bundle for the client.

export interface Confirmation {
  question: string;
  /** What happens at once, in plain words. */
  detail: string;
  /** The button that goes ahead; the other one always says "Cancel". */
  confirm: string;
}

export const confirmRevokeGateway = (gatewayId: string): Confirmation => ({
  question: `Revoke ${gatewayId}?`,
  detail: 'The gateway is disconnected at once and its token stops working. Its bench gets no counts from it until you issue it a new token.',
  confirm: `Revoke ${gatewayId}`,
});

export const confirmRotateToken = (gatewayId: string): Confirmation => ({
  question: `Rotate the token of ${gatewayId}?`,
  detail: 'The gateway is disconnected at once and its old token stops working. It connects again only with the new token, which is shown once, here.',
  confirm: 'Rotate token',
});

export const confirmDeactivateUser = (email: string): Confirmation => ({
  question: `Deactivate ${email}?`,
  detail: 'They are signed out everywhere at once and their API tokens stop working. You can reactivate the account later.',
  confirm: `Deactivate ${email}`,
});

export const confirmDeleteRule = (name: string): Confirmation => ({
  question: `Delete the rule “${name}”?`,
  detail: 'Nothing watches this any more. The alarms it raised are kept in the bench’s history under its name, marked as of a deleted rule; any still raised are cleared now. This cannot be undone.',
  confirm: 'Delete rule',
});

export const confirmStopRun = (title: string): Confirmation => ({
  question: `Stop the run “${title}”?`,
  detail: 'The run ends now; counts go on being recorded, outside any run. A stopped run cannot be started again.',
  confirm: 'Stop run',
});

/** The form field (and its one value) that says a post was confirmed; see http/confirm.ts. */
export const CONFIRM_FIELD = 'confirmed';
export const CONFIRM_VALUE = 'yes';
