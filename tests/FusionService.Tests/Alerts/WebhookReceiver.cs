// A local HTTP receiver on a loopback port that records webhook requests and answers with chosen status codes.
using System.Collections.Concurrent;
using System.Net;
using FusionService.Tests.Infrastructure;

namespace FusionService.Tests.Alerts;

/// <summary>An <see cref="HttpListener"/> on 127.0.0.1; <see cref="Status"/> decides each answer from the request's number (1-based).</summary>
internal sealed class WebhookReceiver : IDisposable
{
    private readonly HttpListener _listener = new();
    private readonly Task _loop;

    public WebhookReceiver()
    {
        int port = FreePort.Next();
        Url = "http://127.0.0.1:" + port.ToString(System.Globalization.CultureInfo.InvariantCulture) + "/hook/";
        _listener.Prefixes.Add(Url);
        _listener.Start();
        _loop = Task.Run(LoopAsync);
    }

    public string Url { get; }

    public Func<int, int> Status { get; set; } = _ => 200;

    /// <summary>Writes headers or a body of the answer after its status is set (the response is closed afterwards).</summary>
    public Func<HttpListenerResponse, Task>? Answer { get; set; }

    public ConcurrentQueue<Received> Requests { get; } = new();

    public async Task<Received[]> WaitForAsync(Func<Received[], bool> done, TimeSpan timeout)
    {
        var deadline = DateTime.UtcNow + timeout;
        while (!done([.. Requests]))
        {
            Assert.True(DateTime.UtcNow < deadline, "the receiver did not get the expected requests; got " + Requests.Count.ToString(System.Globalization.CultureInfo.InvariantCulture));
            await Task.Delay(100);
        }

        return [.. Requests];
    }

    public void Dispose()
    {
        _listener.Stop();
        _listener.Close();
        try
        {
            _loop.Wait(TimeSpan.FromSeconds(5));
        }
        catch (AggregateException)
        {
            // The loop ends with the listener.
        }
    }

    private async Task LoopAsync()
    {
        while (_listener.IsListening)
        {
            HttpListenerContext context;
            try
            {
                context = await _listener.GetContextAsync();
            }
            catch (Exception ex) when (ex is HttpListenerException or ObjectDisposedException or InvalidOperationException)
            {
                return;
            }

            using var reader = new StreamReader(context.Request.InputStream, System.Text.Encoding.UTF8);
            string body = await reader.ReadToEndAsync();
            int number = Requests.Count + 1;
            int status = Status(number);
            Requests.Enqueue(new Received(
                number,
                DateTimeOffset.UtcNow,
                context.Request.Headers["Fusion-Webhook-Id"],
                context.Request.Headers["Fusion-Webhook-Timestamp"],
                context.Request.Headers["Fusion-Webhook-Signature"],
                body,
                status,
                context.Request.Headers["Fusion-Caution"]));
            context.Response.StatusCode = status;
            if (Answer is { } answer)
            {
                try
                {
                    await answer(context.Response);
                }
                catch (Exception ex) when (ex is HttpListenerException or IOException or ObjectDisposedException)
                {
                    // The client stopped reading and closed the connection.
                    context.Response.Abort();
                    continue;
                }
            }

            context.Response.Close();
        }
    }

    public sealed record Received(int Number, DateTimeOffset At, string? Id, string? Timestamp, string? Signature, string Body, int AnsweredStatus, string? Caution = null);
}
