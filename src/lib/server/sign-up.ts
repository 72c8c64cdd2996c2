/** Sign-up lives with the rest of the account paths (confirmation links, resends) in accounts.ts. */
export { signUp } from './accounts';
