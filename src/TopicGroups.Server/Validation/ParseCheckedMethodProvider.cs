using System.Collections;
using System.Reflection;
using Google.Protobuf;
using Google.Protobuf.Reflection;
using Grpc.AspNetCore.Server;
using Grpc.AspNetCore.Server.Model;
using Grpc.Core;
using Microsoft.AspNetCore.Routing;
using TopicGroups.Server.Services;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Validation;

/// <summary>
/// Registers every method of TopicGroupsService a second time, with request deserialisers that turn a refused message
/// (invalid UTF-8 in a string, truncated bytes) into INVALID_ARGUMENT naming the field, instead of grpc-dotnet's
/// UNKNOWN "Exception was thrown by handler.". grpc-dotnet parses a request before any service code or interceptor
/// runs, and the generated marshallers are fixed, so the methods need marshallers of their own.
/// </summary>
/// <remarks>
/// grpc-dotnet's default provider still registers the generated methods (it cannot be told not to);
/// <see cref="ParseCheckedMethods.PreferParseCheckedMethods"/> gives ours the lower route order, so routing picks them and the
/// generated ones are never reached. Both carry TopicGroupsGrpcService as their service type, so reflection
/// lists the service once and global interceptors (the API key first) run for every call as before.
/// </remarks>
internal sealed class ParseCheckedMethodProvider : IServiceMethodProvider<TopicGroupsGrpcService>
{
    /// <summary>Endpoint metadata that marks the methods registered here.</summary>
    internal sealed class Marker
    {
        public static readonly Marker Instance = new();
    }

    public void OnServiceMethodDiscovery(ServiceMethodProviderContext<TopicGroupsGrpcService> context) =>
        Proto.TopicGroupsService.BindService(new Binder(context), serviceImpl: null);

    /// <summary>Receives the generated methods from BindService and adds checked copies that call TopicGroupsGrpcService.</summary>
    private sealed class Binder(ServiceMethodProviderContext<TopicGroupsGrpcService> context) : ServiceBinderBase
    {
        public override void AddMethod<TRequest, TResponse>(Method<TRequest, TResponse> method, UnaryServerMethod<TRequest, TResponse>? handler)
        {
            var call = Implementation<UnaryServerMethod<TopicGroupsGrpcService, TRequest, TResponse>>(
                method.Name, out List<object> metadata, typeof(TRequest), typeof(ServerCallContext));
            context.AddUnaryMethod(Checked(method, failLater: true), metadata, (service, request, callContext) =>
                ParseCheckedMarshaller.IsStandIn(request, out RequestParseFailure? failure)
                    ? throw failure.ToRpcException(chunk: null, elementsBefore: null)
                    : call(service, request, callContext));
        }

        public override void AddMethod<TRequest, TResponse>(Method<TRequest, TResponse> method, ServerStreamingServerMethod<TRequest, TResponse>? handler)
        {
            var call = Implementation<ServerStreamingServerMethod<TopicGroupsGrpcService, TRequest, TResponse>>(
                method.Name, out List<object> metadata, typeof(TRequest), typeof(IServerStreamWriter<TResponse>), typeof(ServerCallContext));
            context.AddServerStreamingMethod(Checked(method, failLater: true), metadata, (service, request, responses, callContext) =>
                ParseCheckedMarshaller.IsStandIn(request, out RequestParseFailure? failure)
                    ? throw failure.ToRpcException(chunk: null, elementsBefore: null)
                    : call(service, request, responses, callContext));
        }

        public override void AddMethod<TRequest, TResponse>(Method<TRequest, TResponse> method, ClientStreamingServerMethod<TRequest, TResponse>? handler)
        {
            var call = Implementation<ClientStreamingServerMethod<TopicGroupsGrpcService, TRequest, TResponse>>(
                method.Name, out List<object> metadata, typeof(IAsyncStreamReader<TRequest>), typeof(ServerCallContext));
            context.AddClientStreamingMethod(Checked(method, failLater: false), metadata, (service, requests, callContext) =>
                call(service, new ChunkCountingReader<TRequest>(requests), callContext));
        }

        public override void AddMethod<TRequest, TResponse>(Method<TRequest, TResponse> method, DuplexStreamingServerMethod<TRequest, TResponse>? handler)
        {
            var call = Implementation<DuplexStreamingServerMethod<TopicGroupsGrpcService, TRequest, TResponse>>(
                method.Name, out List<object> metadata, typeof(IAsyncStreamReader<TRequest>), typeof(IServerStreamWriter<TResponse>), typeof(ServerCallContext));
            context.AddDuplexStreamingMethod(Checked(method, failLater: false), metadata, (service, requests, responses, callContext) =>
                call(service, new ChunkCountingReader<TRequest>(requests), responses, callContext));
        }

        private static Method<TRequest, TResponse> Checked<TRequest, TResponse>(Method<TRequest, TResponse> method, bool failLater)
            where TRequest : class
            where TResponse : class =>
            new(method.Type, method.ServiceName, method.Name,
                ParseCheckedMarshaller.Wrap(method.RequestMarshaller, DescriptorOf<TRequest>(), failLater), method.ResponseMarshaller);

        /// <summary>
        /// The service's public override of <paramref name="name"/> as an open delegate, and its endpoint metadata, both
        /// as grpc-dotnet's own binder makes them (class attributes, method attributes, POST with CORS preflight allowed),
        /// plus the marker for the route-order convention.
        /// </summary>
        private static TDelegate Implementation<TDelegate>(string name, out List<object> metadata, params Type[] parameters)
            where TDelegate : Delegate
        {
            MethodInfo implementation = typeof(TopicGroupsGrpcService).GetMethod(name, BindingFlags.Public | BindingFlags.Instance, parameters)
                ?? throw new InvalidOperationException($"TopicGroupsGrpcService has no public {name} to call.");
            metadata =
            [
                .. typeof(TopicGroupsGrpcService).GetCustomAttributes(inherit: true),
                .. implementation.GetCustomAttributes(inherit: true),
                new HttpMethodMetadata(["POST"], acceptCorsPreflight: true),
                Marker.Instance,
            ];
            return implementation.CreateDelegate<TDelegate>();
        }
    }

    internal static MessageDescriptor DescriptorOf<TMessage>() =>
        ((IMessage)Activator.CreateInstance(typeof(TMessage))!).Descriptor;

    /// <summary>
    /// Passes a request stream through, counting the elements of each top-level repeated field (documents) in the
    /// chunks read so far, so a chunk the parser refuses is reported with indexes in the whole batch. Asking for the
    /// next chunk releases the previous one's pooled packed_embeddings (<see cref="PooledPackedField"/>): handlers
    /// copy what they keep of a chunk before they read on.
    /// </summary>
    private sealed class ChunkCountingReader<TRequest>(IAsyncStreamReader<TRequest> requests) : IAsyncStreamReader<TRequest>
        where TRequest : class
    {
        private static readonly FieldDescriptor[] RepeatedFields =
            [.. DescriptorOf<TRequest>().Fields.InFieldNumberOrder().Where(field => field.IsRepeated)];

        private readonly int[] _elementsBefore = new int[RepeatedFields.Length];
        private int _chunks;

        public TRequest Current => requests.Current;

        public async Task<bool> MoveNext(CancellationToken cancellationToken)
        {
            if (_chunks > 0)
            {
                PooledPackedField.Release((IMessage)Current);
            }

            bool moved;
            try
            {
                moved = await requests.MoveNext(cancellationToken);
            }
            catch (RequestParseFailure failure)
            {
                throw failure.ToRpcException(_chunks, ElementsBefore);
            }

            if (moved)
            {
                for (int i = 0; i < RepeatedFields.Length; i++)
                {
                    _elementsBefore[i] += ((IList)RepeatedFields[i].Accessor.GetValue((IMessage)Current)).Count;
                }

                _chunks++;
            }

            return moved;
        }

        private int ElementsBefore(FieldStep step)
        {
            int field = Array.FindIndex(RepeatedFields, candidate => candidate.Name == step.Name);
            return field < 0 ? 0 : _elementsBefore[field];
        }
    }
}

/// <summary>Wiring for <see cref="ParseCheckedMethodProvider"/> (called from ServerHost).</summary>
internal static class ParseCheckedMethods
{
    public static void AddParseCheckedMethods(this IServiceCollection services) =>
        services.AddSingleton<IServiceMethodProvider<TopicGroupsGrpcService>, ParseCheckedMethodProvider>();

    /// <summary>Makes routing choose the parse-checked methods over the generated ones.</summary>
    public static TBuilder PreferParseCheckedMethods<TBuilder>(this TBuilder service)
        where TBuilder : IEndpointConventionBuilder
    {
        service.Add(endpoint =>
        {
            if (endpoint is RouteEndpointBuilder route && endpoint.Metadata.Contains(ParseCheckedMethodProvider.Marker.Instance))
            {
                route.Order = -1;   // lower wins; grpc-dotnet maps its own at order 0
            }
        });
        return service;
    }
}
