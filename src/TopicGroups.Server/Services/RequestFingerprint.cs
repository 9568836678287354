using System.IO.Hashing;
using System.Text;
using Google.Protobuf;

namespace TopicGroups.Server.Services;

/// <summary>
/// A 128-bit hash (XXH3-128) of what a grouping call sent (method, options, documents), without its request id, so
/// that a retry can be told apart from a different request that reuses the id within one tenant. Messages are
/// hashed as they are encoded, with a length before each, straight into the hash: the batch is not copied.
/// </summary>
/// <remarks>
/// Not a cryptographic hash, and it need not be one: the id is scoped to the caller's tenant, so only the caller
/// could send colliding content under its own id, and would only get its own earlier reply. At 100,000 × 384
/// (154 MB) it takes about 0.015 s against 0.19 s for SHA-256, which this replaced (on the receive path, measured
/// on the 2-core VM). The value is prefixed with "xxh128:" so that hashes stored before the change (64 hex digits
/// of SHA-256) are told apart.
/// </remarks>
internal sealed class RequestFingerprint
{
    public const string Prefix = "xxh128:";

    /// <summary>Messages up to this size (a streamed chunk without its packed block) are encoded into a pooled buffer.</summary>
    private const int PooledEncodingBytes = 64 * 1024;

    private readonly XxHash128 _hash = new();
    private readonly HashSink _sink;

    public RequestFingerprint(string method)
    {
        _sink = new HashSink(_hash);
        _hash.Append(Encoding.UTF8.GetBytes(method + "\n"));
    }

    public void Add(IMessage message)
    {
        int size = message.CalculateSize();
        Span<byte> length = stackalloc byte[4];
        System.Buffers.Binary.BinaryPrimitives.WriteInt32LittleEndian(length, size);
        _hash.Append(length);
        if (size > PooledEncodingBytes)
        {
            message.WriteTo(_sink);   // a large unary request: encoded in pieces straight into the hash
            return;
        }

        // The same bytes as through the stream, without a CodedOutputStream and its buffer for every chunk.
        byte[] buffer = System.Buffers.ArrayPool<byte>.Shared.Rent(size);
        try
        {
            Span<byte> encoded = buffer.AsSpan(0, size);
            message.WriteTo(encoded);
            _hash.Append(encoded);
        }
        finally
        {
            System.Buffers.ArrayPool<byte>.Shared.Return(buffer);
        }
    }

    /// <summary>
    /// Adds a message whose one large bytes field the caller has emptied, then that field's bytes: the message as in
    /// <see cref="Add(IMessage)"/>, then the block's length and the block hashed where it lies (re-encoding a packed
    /// chunk only to hash it copied every byte once more). Every part carries its length, so different content
    /// still gives a different sequence of hashed bytes.
    /// </summary>
    public void Add(IMessage messageWithoutBlock, ReadOnlySpan<byte> block)
    {
        Add(messageWithoutBlock);
        Span<byte> length = stackalloc byte[8];
        System.Buffers.Binary.BinaryPrimitives.WriteInt64LittleEndian(length, block.Length);
        _hash.Append(length);
        _hash.Append(block);
    }

    /// <summary>"xxh128:" and the lower-case hex of the hash; the fingerprint cannot be added to afterwards.</summary>
    public string Finish()
    {
        string hash = Prefix + Convert.ToHexStringLower(_hash.GetCurrentHash());
        _hash.Reset();
        return hash;
    }

    /// <summary>A write-only stream that feeds the hash.</summary>
    private sealed class HashSink(XxHash128 hash) : Stream
    {
        public override bool CanRead => false;

        public override bool CanSeek => false;

        public override bool CanWrite => true;

        public override long Length => throw new NotSupportedException();

        public override long Position { get => throw new NotSupportedException(); set => throw new NotSupportedException(); }

        public override void Write(byte[] buffer, int offset, int count) => hash.Append(buffer.AsSpan(offset, count));

        public override void Write(ReadOnlySpan<byte> buffer) => hash.Append(buffer);

        public override void Flush()
        {
        }

        public override int Read(byte[] buffer, int offset, int count) => throw new NotSupportedException();

        public override long Seek(long offset, SeekOrigin origin) => throw new NotSupportedException();

        public override void SetLength(long value) => throw new NotSupportedException();
    }
}
