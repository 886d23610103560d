/** The one place pages get superforms' zod 4 adapter from. */
export { superValidate, message, setError, fail } from 'sveltekit-superforms';
export { zod4 } from 'sveltekit-superforms/adapters';
