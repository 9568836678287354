using System.Buffers;
using System.Runtime.CompilerServices;
using System.Text;
using Google.Protobuf;
using Google.Protobuf.Reflection;
using Google.Rpc;
using Grpc.Core;

namespace TopicGroups.Server.Validation;

/// <summary>
/// A request message the protobuf parser refused, with what is known about why. Thrown by the checked request
/// deserialiser (<see cref="ParseCheckedMarshaller"/>) and turned into INVALID_ARGUMENT by the method invokers of
/// <see cref="ParseCheckedMethodProvider"/>, which know the call's chunk count and so can number documents across chunks.
/// </summary>
internal sealed class RequestParseFailure(MessageDescriptor message, IReadOnlyList<InvalidUtf8Field> invalidUtf8, Exception parserError)
    : Exception($"A {message.FullName} could not be parsed: {parserError.Message}", parserError)
{
    // At most this many violations per error, as RequestValidator reports.
    internal const int MaxViolations = 20;

    public MessageDescriptor MessageType { get; } = message;

    public IReadOnlyList<InvalidUtf8Field> InvalidUtf8 { get; } = invalidUtf8;

    /// <summary>
    /// The error to send. <paramref name="elementsBefore"/> gives, per top-level repeated field, how many elements
    /// earlier chunks of the stream held (null for a single message), so paths index the whole batch.
    /// </summary>
    public RpcException ToRpcException(int? chunk, Func<FieldStep, int>? elementsBefore)
    {
        string where = chunk is int number ? $" (in stream chunk {number})" : string.Empty;
        if (InvalidUtf8.Count == 0)
        {
            // Not a UTF-8 problem: truncated or garbled bytes. No field can be named.
            return new RpcException(new Grpc.Core.Status(StatusCode.InvalidArgument,
                $"The request{where} is not a well-formed {MessageType.FullName} protobuf message ({InnerException!.Message}). "
                + "Serialise requests with a protobuf library from protos/topicgroups/v1/topic_groups_service.proto."));
        }

        var violations = new List<BadRequest.Types.FieldViolation>(InvalidUtf8.Count);
        foreach (InvalidUtf8Field field in InvalidUtf8)
        {
            IReadOnlyList<FieldStep> path = field.Path;
            if (elementsBefore is not null && path[0].Index != FieldStep.Singular)
            {
                path = [path[0] with { Index = path[0].Index + elementsBefore(path[0]) }, .. path.Skip(1)];
            }

            violations.Add(new BadRequest.Types.FieldViolation
            {
                Field = string.Join('.', path),
                Description = $"is not valid UTF-8{where}: byte {field.BadByteOffset} of its {field.Length} is 0x{field.BadByte:X2}. "
                    + "Protobuf string fields carry UTF-8 only; decode the text from its source encoding (Latin-1, Windows-1252, UTF-16...) "
                    + "and send it as UTF-8, or drop the bytes that are not text.",
            });
        }

        return StatusErrors.InvalidArgument(violations);
    }
}

/// <summary>Wraps a generated request marshaller so that a refused message becomes a <see cref="RequestParseFailure"/>.</summary>
internal static class ParseCheckedMarshaller
{
    // Requests read before any interceptor runs (unary, server streaming) may not fail there: the API key must be checked
    // first. Their deserialiser returns an empty stand-in message, remembered here with its failure, and the method
    // invoker (which runs after every interceptor) throws the failure instead of calling the service.
    private static readonly ConditionalWeakTable<object, RequestParseFailure> StandIns = new();

    public static Marshaller<T> Wrap<T>(Marshaller<T> generated, MessageDescriptor descriptor, bool failLater)
        where T : class
    {
        Func<DeserializationContext, T> parse = generated.ContextualDeserializer;
        // Only streamed chunks borrow: their reader releases each one when the next is asked for (see
        // PooledPackedField); a unary request would hold its array until the handler ends.
        FieldDescriptor? pooled = failLater ? null : PooledPackedField.FieldOf(descriptor);
        return Marshallers.Create(generated.ContextualSerializer, context =>
        {
            try
            {
                return pooled is not null && PooledPackedField.TryParse(context.PayloadAsReadOnlySequence(), descriptor, pooled, out IMessage? message)
                    ? (T)message
                    : parse(context);
            }
            catch (Exception exception) when (exception is InvalidProtocolBufferException or DecoderFallbackException)
            {
                ReadOnlySequence<byte> payload = context.PayloadAsReadOnlySequence();
                var failure = new RequestParseFailure(descriptor,
                    InvalidUtf8Fields.Find(descriptor, payload, RequestParseFailure.MaxViolations), exception);
                if (!failLater)
                {
                    throw failure;
                }

                var standIn = (T)descriptor.Parser.ParseFrom(ReadOnlySpan<byte>.Empty);
                StandIns.AddOrUpdate(standIn, failure);
                return standIn;
            }
        });
    }

    /// <summary>The failure a stand-in message stands for, if <paramref name="request"/> is one.</summary>
    public static bool IsStandIn(object request, [System.Diagnostics.CodeAnalysis.NotNullWhen(true)] out RequestParseFailure? failure) =>
        StandIns.TryGetValue(request, out failure);
}
