// Asks before a change that cannot be taken back, in a native modal <dialog>: the browser traps
// focus inside it, closes it on Escape and gives focus back to the button that opened it. Cancel
// has the focus first, so Enter on an opened dialog never does the harm.
import type { Confirmation } from '../confirmations.ts';

let serial = 0;

/** Resolves true when the person chose to go ahead, false on Cancel or Escape. */
export function askToConfirm(c: Confirmation): Promise<boolean> {
  serial += 1;
  const id = `confirm-${serial}`;
  const dialog = document.createElement('dialog');
  dialog.className = 'confirm-dialog';
  dialog.setAttribute('aria-labelledby', `${id}-q`);
  dialog.setAttribute('aria-describedby', `${id}-d`);
  // Text nodes only: the question holds names people typed (a rule's, a run's).
  const question = document.createElement('h2');
  question.id = `${id}-q`;
  question.className = 'mb-2 font-semibold';
  question.textContent = c.question;
  const detail = document.createElement('p');
  detail.id = `${id}-d`;
  detail.className = 'mb-4 text-sm text-muted';
  detail.textContent = c.detail;
  const form = document.createElement('form');
  form.method = 'dialog';
  form.className = 'flex flex-wrap justify-end gap-2';
  const cancel = document.createElement('button');
  cancel.className = 'btn';
  cancel.value = 'cancel';
  cancel.textContent = 'Cancel';
  cancel.autofocus = true;
  const go = document.createElement('button');
  go.className = 'btn-danger';
  go.value = 'confirm';
  go.textContent = c.confirm;
  form.append(cancel, go);
  dialog.append(question, detail, form);
  document.body.append(dialog);
  return new Promise((resolve) => {
    dialog.addEventListener(
      'close',
      () => {
        resolve(dialog.returnValue === 'confirm');
        dialog.remove();
      },
      { once: true },
    );
    dialog.showModal();
  });
}
