/**
 * The client address travels from the auth route to the credentials check in a header that the
 * route sets itself (any incoming header of that name is replaced), so a client cannot forge it.
 */
export const CLIENT_ADDRESS_HEADER = 'x-beamwarden-client-address';
