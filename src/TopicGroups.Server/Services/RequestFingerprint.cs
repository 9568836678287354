using System.Security.Cryptography;
using System.Text;
using Google.Protobuf;

namespace TopicGroups.Server.Services;

/// <summary>
/// SHA-256 over what a grouping call sent (method, options, documents), without its request id, so that a retry can
/// be told apart from a different request that reuses the id. Messages are hashed as they are encoded, with a
/// length before each, straight into the hash: the batch is not copied.
/// </summary>
internal sealed class RequestFingerprint : IDisposable
{
    private readonly IncrementalHash _hash = IncrementalHash.CreateHash(HashAlgorithmName.SHA256);
    private readonly HashSink _sink;

    public RequestFingerprint(string method)
    {
        _sink = new HashSink(_hash);
        _hash.AppendData(Encoding.UTF8.GetBytes(method + "\n"));
    }

    public void Add(IMessage message)
    {
        Span<byte> length = stackalloc byte[4];
        System.Buffers.Binary.BinaryPrimitives.WriteInt32LittleEndian(length, message.CalculateSize());
        _hash.AppendData(length);
        message.WriteTo(_sink);
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
        _hash.AppendData(length);
        _hash.AppendData(block);
    }

    /// <summary>Lower-case hex of the hash; the fingerprint cannot be added to afterwards.</summary>
    public string Finish() => Convert.ToHexStringLower(_hash.GetHashAndReset());

    public void Dispose() => _hash.Dispose();

    /// <summary>A write-only stream that feeds the hash.</summary>
    private sealed class HashSink(IncrementalHash hash) : Stream
    {
        public override bool CanRead => false;

        public override bool CanSeek => false;

        public override bool CanWrite => true;

        public override long Length => throw new NotSupportedException();

        public override long Position { get => throw new NotSupportedException(); set => throw new NotSupportedException(); }

        public override void Write(byte[] buffer, int offset, int count) => hash.AppendData(buffer, offset, count);

        public override void Write(ReadOnlySpan<byte> buffer) => hash.AppendData(buffer);

        public override void Flush()
        {
        }

        public override int Read(byte[] buffer, int offset, int count) => throw new NotSupportedException();

        public override long Seek(long offset, SeekOrigin origin) => throw new NotSupportedException();

        public override void SetLength(long value) => throw new NotSupportedException();
    }
}
