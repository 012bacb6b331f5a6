/**
 * Decoders know nothing about files: they raise CorruptBlockError, and the
 * reader turns it into an InputError naming the file and the block.
 */
export class CorruptBlockError extends Error {
  override readonly name = 'CorruptBlockError';
}
