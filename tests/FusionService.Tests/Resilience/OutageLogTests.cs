// A database outage is logged once when it begins and once when it ends, not once per failed attempt.
using FusionService.Database;
using FusionService.Tests.Infrastructure;
using Microsoft.Extensions.Configuration;
using Microsoft.Extensions.Logging;
using Npgsql;

namespace FusionService.Tests.Resilience;

public sealed class OutageLogTests
{
    [Fact]
    public async Task Issue13_an_outage_logs_one_line_when_it_begins_and_one_when_it_ends()
    {
        var lines = new List<(LogLevel Level, string Text, Exception? Error)>();
        using var loggers = LoggerFactory.Create(b => b.SetMinimumLevel(LogLevel.Trace).AddProvider(new ListLoggerProvider(lines)));
        await using var store = new FusionDatabase(
            new ConfigurationBuilder().Build(), Microsoft.Extensions.Options.Options.Create(new DatabaseOptions()), loggers);

        // A real connection failure: nothing listens on the port.
        var refused = await Assert.ThrowsAnyAsync<NpgsqlException>(async () =>
        {
            await using var connection = new NpgsqlConnection("Host=127.0.0.1;Port=" + FreePort.Next().ToString(System.Globalization.CultureInfo.InvariantCulture) + ";Username=postgres;Timeout=2");
            await connection.OpenAsync();
        });

        for (int attempt = 0; attempt < 300; attempt++)
        {
            Assert.True(store.NoteFailure(refused));
        }

        Assert.True(store.IsDown);
        for (int attempt = 0; attempt < 5; attempt++)
        {
            store.NoteSuccess();
        }

        Assert.False(store.IsDown);
        Assert.False(store.NoteFailure(new InvalidOperationException("not a connection failure")));
        Assert.False(store.IsDown);

        var logged = lines.Where(l => l.Level >= LogLevel.Information).ToList();
        Assert.Equal(2, logged.Count);
        Assert.Equal(LogLevel.Warning, logged[0].Level);
        Assert.Contains("unavailable", logged[0].Text, StringComparison.Ordinal);
        Assert.Null(logged[0].Error);
        Assert.Equal(LogLevel.Information, logged[1].Level);
        Assert.Contains("300 failed operations", logged[1].Text, StringComparison.Ordinal);
    }

    private sealed class ListLoggerProvider(List<(LogLevel Level, string Text, Exception? Error)> lines) : ILoggerProvider
    {
        public ILogger CreateLogger(string categoryName) => new ListLogger(lines);

        public void Dispose()
        {
        }
    }

    private sealed class ListLogger(List<(LogLevel Level, string Text, Exception? Error)> lines) : ILogger
    {
        public IDisposable? BeginScope<TState>(TState state)
            where TState : notnull => null;

        public bool IsEnabled(LogLevel logLevel) => true;

        public void Log<TState>(LogLevel logLevel, EventId eventId, TState state, Exception? exception, Func<TState, Exception?, string> formatter)
        {
            lock (lines)
            {
                lines.Add((logLevel, formatter(state, exception), exception));
            }
        }
    }
}
